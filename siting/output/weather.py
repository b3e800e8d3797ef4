"""The files of ``siting weather``: frequency table, charts and summary, written atomically.

An adapter of the output layer (like ``place_outputs`` and ``region_outputs``): the hourly
record is read and binned by ``weather_hourly`` (which writes nothing), the charts are drawn by
``figures``, and everything goes through ``outputs.staged_folder``. Functions of those modules
are called through the module (``weather_hourly.frequency_table_from_hourly``), so a test can
stand one in.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from datetime import UTC, datetime
from pathlib import Path

from siting._version import __version__
from siting.dispersion.hourly import HourlyWeather
from siting.output.folder import check_output_dir, staged_folder
from siting.output.records import sha256_of
from siting.presentation import figures
from siting.readers import hourly_record as weather_hourly


def _sector_note(weather: HourlyWeather, n_sectors: int) -> str | None:
    """A warning when reported directions fall unevenly into the table's sectors."""
    step = weather_hourly.direction_step_deg(weather.direction_deg)

    def even(n: int) -> bool:
        ratio = 360.0 / n / step
        return abs(ratio - round(ratio)) < 1e-9

    if step <= 0 or even(n_sectors):
        return None
    better = [str(n) for n in (8, 12, 16, 18, 24, 36) if even(n)]
    return (
        f"directions are reported in {step:g} deg steps, which do not divide the "
        f"{360.0 / n_sectors:g} deg sectors evenly, so some sectors of frequency_table.csv "
        f"hold more reported directions than others; {' or '.join(better)} sectors avoid "
        "that"
    )


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

    Files: ``frequency_table.csv`` (usable as a scenario's ``frequency_table``),
    ``wind_rose.png``, ``stability_by_speed.png`` and ``summary.json`` (the summary, warnings,
    table settings and the SHA-256 of every input file). Everything is written into a staging
    folder beside ``out_dir`` and moved into place when complete; an existing ``out_dir`` is
    replaced only with ``overwrite`` (``outputs.staged_folder``, as for ``siting screen``).

    Returns
    -------
    out_dir : Path
        The folder written (absolute).
    warnings : list of str
        The warnings given plus any about the table's sectors.
    """

    out_dir = Path(out_dir).resolve()
    check_output_dir(out_dir, overwrite)
    table = weather_hourly.frequency_table_from_hourly(weather, n_sectors)
    warnings = list(warnings)
    note = _sector_note(weather, n_sectors)
    if note:
        warnings.append(note)
    record = {
        "tool": "siting weather",
        "version": __version__,
        "run_time_utc": datetime.now(UTC).replace(microsecond=0).isoformat(),
        "inputs": [
            {"path": str(Path(p).resolve()), "sha256": sha256_of(Path(p))} for p in input_paths
        ],
        "frequency_table": {
            "file": "frequency_table.csv",
            "sectors": int(n_sectors),
            "sector_width_deg": 360.0 / n_sectors,
            "speed_class_edges_m_s": list(weather_hourly.DEFAULT_SPEED_EDGES_M_S),
            "speed_rule": "speed_m_s of a class = mean speed of the hours in it (after the calm "
            "rule); the last class is open",
            "rows": len(table),
        },
        "summary": summary,
        "warnings": warnings,
    }
    with staged_folder(out_dir, overwrite) as staging:
        table.to_csv(staging / "frequency_table.csv", index=False, float_format="%.10g")
        (staging / "wind_rose.png").write_bytes(figures.wind_rose_png(weather))
        (staging / "stability_by_speed.png").write_bytes(figures.stability_by_speed_png(weather))
        (staging / "summary.json").write_text(
            json.dumps(record, indent=2, default=str), encoding="utf-8"
        )
    return out_dir, warnings
