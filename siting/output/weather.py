"""The files of ``siting weather``: frequency table, charts and summary, written atomically.

An adapter of the output layer (like ``place_outputs`` and ``region_outputs``): the hourly
record is read and binned by ``weather_hourly`` (which writes nothing), the charts are drawn by
``weather_figures`` and rendered to PNG by ``figure_png``, and everything goes through
``outputs.staged_folder``. Functions of those modules are called through the module
(``weather_hourly.frequency_table_from_hourly``, ``weather_figures.stability_by_speed_figure``),
so a test can stand one in.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from datetime import UTC, datetime
from pathlib import Path

import pandas as pd

from siting._version import __version__
from siting.dispersion.hourly import HourlyWeather
from siting.errors import collect_warnings, unique_messages
from siting.output.folder import check_output_dir, staged_folder
from siting.output.records import sha256_of
from siting.presentation import weather_figures
from siting.presentation.figure_parts import figure_png
from siting.readers import hourly_table as weather_hourly


def _portable(path: Path) -> str:
    """An input's path as summary.json records it: relative to the current folder where the
    file lies under it, else its name alone (nothing of the machine's folders)."""
    resolved = path.resolve()
    try:
        return resolved.relative_to(Path.cwd().resolve()).as_posix()
    except ValueError:
        return resolved.name


def write_weather_outputs(
    out_dir: Path,
    weather: HourlyWeather,
    summary: dict,
    warnings: list[str],
    *,
    n_sectors: int = 12,
    overwrite: bool = False,
    input_paths: Sequence[Path] = (),
) -> tuple[Path, list[str]]:
    """Write the products of ``siting weather`` into ``out_dir``, atomically.

    Files: ``frequency_table.csv`` (all years together; usable as a scenario's
    ``frequency_table``), ``by_year/frequency_table_<year>.csv`` (one per calendar year, the
    same sectors and speed classes) and ``years.csv`` (per year: hours used, calms, mean speed,
    prevailing wind) when the record spans more than one calendar year, ``wind_rose.png``,
    ``stability_by_speed.png`` and ``summary.json`` (the summary, warnings, table settings and
    the SHA-256 of every input file). Everything is written into a staging
    folder beside ``out_dir`` and moved into place when complete; an existing ``out_dir`` is
    replaced only with ``overwrite`` (``outputs.staged_folder``, as for ``siting screen``).

    Parameters
    ----------
    out_dir : str or Path
        The output folder.
    weather : HourlyWeather
        The hours (:func:`siting.readers.hourly_record.read_hourly_record`).
    summary : dict
        The record's summary, from the same call.
    warnings : list of str
        The record's warnings, from the same call.
    n_sectors : int
        Direction sectors of the frequency table, 4..360.
    overwrite : bool
        Replace an existing output folder of siting.
    input_paths : sequence of Path
        The record's files, hashed into summary.json.

    Returns
    -------
    out_dir : Path
        The folder written (absolute).
    warnings : list of str
        The warnings given plus any the binning into sectors raised (WeatherWarning: the
        directions fall unevenly into the sectors), each message once.

    Raises
    ------
    OutputExistsError
        ``out_dir`` exists without ``overwrite``, is not a folder siting wrote, holds an input,
        is being written by another run, or its parent cannot be written or lacks the room.
    InterruptedAfterWriting
        Interrupted after the new folder was in place (the result is whole).
    """

    out_dir = Path(out_dir).resolve()
    check_output_dir(out_dir, overwrite)
    with collect_warnings() as binning:
        table = weather_hourly.frequency_table_from_hourly(weather, n_sectors)
        years = sorted({int(y) for y in weather.years})
        by_year = (
            {
                y: weather_hourly.frequency_table_from_hourly(weather.of_year(y), n_sectors)
                for y in years
            }
            if len(years) > 1
            else {}
        )
    warnings = unique_messages([*warnings, *binning.messages])
    record = {
        "tool": "siting weather",
        "version": __version__,
        "run_time_utc": datetime.now(UTC).replace(microsecond=0).isoformat(),
        "inputs": [{"path": _portable(Path(p)), "sha256": sha256_of(Path(p))} for p in input_paths],
        "frequency_table": {
            "file": "frequency_table.csv",
            "sectors": int(n_sectors),
            "sector_width_deg": 360.0 / n_sectors,
            "speed_class_edges_m_s": list(weather_hourly.DEFAULT_SPEED_EDGES_M_S),
            "speed_rule": "speed_m_s of a class = mean speed of the hours in it (after the calm "
            "rule); the last class is open",
            "rows": len(table),
            "by_year": [f"by_year/frequency_table_{y}.csv" for y in by_year],
        },
        "summary": summary,
        "warnings": warnings,
    }
    with staged_folder(out_dir, overwrite) as staging:
        table.to_csv(staging / "frequency_table.csv", index=False, float_format="%.10g")
        if by_year:
            (staging / "by_year").mkdir()
            for year, year_table in by_year.items():
                year_table.to_csv(
                    staging / "by_year" / f"frequency_table_{year}.csv",
                    index=False,
                    float_format="%.10g",
                )
            pd.DataFrame(summary["by_year"]).to_csv(
                staging / "years.csv", index=False, float_format="%.6g"
            )
        (staging / "wind_rose.png").write_bytes(
            figure_png(weather_figures.wind_rose_figure(weather, n_sectors=n_sectors))
        )
        (staging / "stability_by_speed.png").write_bytes(
            figure_png(weather_figures.stability_by_speed_figure(weather))
        )
        (staging / "summary.json").write_text(
            json.dumps(record, indent=2, default=str), encoding="utf-8"
        )
    return out_dir, warnings
