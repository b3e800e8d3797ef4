"""The weather summary as the report shows it: the source of the record in words.

A reader's summary (``readers/hourly_record.py``) keeps each file's layout and what its
missing codes and quality flags removed as nested values; the report states them as sentences:
the format, each file with what was left out, the record's position and its distance from the
site. Everything else of the summary is shown as it is.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

_FORMAT_WORDS = {
    "csv": "CSV",
    "isd-lite": "ISD-Lite station-year files (the open global station archive)",
    "netcdf": "CF NetCDF (a reanalysis grid)",
}


def weather_summary_view(summary: Mapping[str, Any]) -> dict[str, Any]:
    """The summary with its source keys in words (format, sources, record_position); grid_point is
    folded into record_position. Other keys (all of a frequency table's but its position)
    are returned as they are.

    Parameters
    ----------
    summary : mapping
        A weather summary (``read_hourly_record`` or ``read_frequency_table``).

    Returns
    -------
    dict
        The summary as the report shows it.
    """
    shown = {}
    for key, value in summary.items():
        if key == "grid_point":
            continue
        if key == "format":
            shown[key] = _FORMAT_WORDS.get(str(value), str(value))
        elif key == "sources":
            shown[key] = "; ".join(_file_words(name, s) for name, s in value.items())
        elif key == "record_position":
            shown[key] = station_words(value)
        else:
            shown[key] = value
    return shown


def station_words(station: Mapping[str, Any] | None) -> str:
    """The record's position and its distance from the site, in one sentence.

    Parameters
    ----------
    station : mapping, optional
        The summary's ``record_position`` (``hourly_record.record_position``).

    Returns
    -------
    str
        The sentence.
    """
    if not station or station.get("position") is None:
        return (
            "not given: the distance from the site is not checked (give the station's "
            "position: weather.station_latitude_deg, weather.station_longitude_deg)"
        )
    return (
        f"{station['position']}, at {station['latitude_deg']:.4f}° N, "
        f"{station['longitude_deg']:.4f}° E: {station['distance_km']:.1f} km from the site "
        f"({station['rule']})"
    )


def _file_words(name: str, source: Mapping[str, Any]) -> str:
    """One file: its layout and what its missing codes and flags removed."""
    removed = []
    for group, words in (
        ("missing_codes", "missing codes"),
        ("not_in_oktas", "not in oktas"),
        ("flags_rejected", "quality flag not accepted"),
    ):
        counts = {k: int(v) for k, v in (source.get(group) or {}).items() if int(v)}
        if counts:
            removed.append(f"{words}: " + ", ".join(f"{k} {v}" for k, v in counts.items()))
    tail = "; ".join(removed) if removed else "no missing codes or rejected flags"
    extra = [
        f"{k.replace('_', ' ')}: {source[k]}"
        for k in ("quality_flags", "ceiling")
        if isinstance(source.get(k), str)
    ]
    return f"{name}: {source.get('layout', source.get('format'))} ({'; '.join([tail, *extra])})"
