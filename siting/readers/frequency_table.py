"""Weather input: a joint frequency table CSV -> :class:`WeatherClasses` and a summary.

An adapter: reads, checks and converts; the physics is elsewhere (the sector-averaged plumes of
``longterm.py``). What lives here is :func:`read_frequency_table`, the reader of the table a
scenario's ``[weather] frequency_table`` names, with the table's column names. What does not:
hourly station records -- reading them, the calm and missing-hour rules, frequency tables made
from them and the files of ``siting weather`` -- live in ``weather_hourly.py``.

Frequency table CSV
-------------------
Columns ``direction_deg,speed_m_s,stability,frequency``: the direction the wind blows FROM
(sector centre, degrees clockwise from north), the class speed at anemometer height, the
Pasquill class A-F and the frequency (fractions summing to 1, or counts, normalised here). The
sectors are the table's distinct directions, which must be evenly spaced round the compass;
rows of zero frequency are allowed. Other columns (such as ``hours``) are ignored.
"""

from __future__ import annotations

import warnings
from pathlib import Path

import numpy as np
import pandas as pd

from siting.dispersion.inputs import WeatherClasses
from siting.errors import InputError, WeatherWarning
from siting.physics.plume import STABILITY_CLASSES

COLUMNS = ("direction_deg", "speed_m_s", "stability", "frequency")


#: How far fractions may sum from 1 (rounding in a table printed to 3-4 decimals; our choice).
FRACTION_SUM_TOLERANCE = 0.01


def read_frequency_table(
    path: Path, anemometer_height_m: float = 10.0, min_wind_speed_m_s: float = 1.0
) -> tuple[WeatherClasses, dict]:
    """Read and check a frequency table.

    Class speeds below ``min_wind_speed_m_s`` are raised to it, with a WeatherWarning.

    Parameters
    ----------
    path : str or Path
        CSV with columns ``direction_deg,speed_m_s,stability,frequency`` (direction the wind
        blows FROM [deg clockwise from north], class speed [m s-1], Pasquill class A-F, share of
        the time or a count).
    anemometer_height_m : float
        Height of the wind measurement [m].
    min_wind_speed_m_s : float
        Floor of the class speeds [m s-1]: slower classes are raised to it, with a warning.

    Returns
    -------
    weather : WeatherClasses
        The table as arrays (frequencies normalised to a sum of 1).
    summary : dict
        Sectors, speed classes, share by stability class, mean speed, raised share.

    Raises
    ------
    InputError
        The file is missing or not a readable CSV, a column is missing, a value is not a finite
        number or out of range, or the directions are not evenly spaced sectors.
    """
    name = Path(path).name
    table, as_written, lines = _read_table(path, name)
    _numeric_columns(table, as_written, lines, name)
    stability, direction, speed, freq = _checked_values(table, lines, name)
    total, counts = _frequency_total(freq, name)
    sectors = _sectors(direction, name)
    raised = speed < min_wind_speed_m_s
    raised_share = float(freq[raised].sum() / total)
    if raised.any():
        warnings.warn(
            f"{name}: {raised_share:.1%} of the time has class speeds below "
            f"{min_wind_speed_m_s} m/s; raised to that floor (plume formula needs u > 0)",
            WeatherWarning,
            stacklevel=2,
        )
    speed = np.maximum(speed, min_wind_speed_m_s)
    speeds = np.unique(speed)
    frequency = np.zeros((len(sectors), len(speeds), len(STABILITY_CLASSES)))
    k = np.searchsorted(sectors, direction)
    j = np.searchsorted(speeds, speed)
    s = stability.map({c: i for i, c in enumerate(STABILITY_CLASSES)}).to_numpy()
    np.add.at(frequency, (k, j, s), freq / total)
    weather = WeatherClasses(sectors, speeds, frequency, anemometer_height_m)
    by_class = frequency.sum(axis=(0, 1))
    by_sector = frequency.sum(axis=(1, 2))
    summary = {
        "file": name,
        "sectors": len(sectors),
        "sector_width_deg": 360.0 / len(sectors),
        "speed_classes_m_s": [float(v) for v in speeds],
        "mean_speed_m_s": float((frequency.sum(axis=(0, 2)) * speeds).sum()),
        "stability_share": {c: float(by_class[i]) for i, c in enumerate(STABILITY_CLASSES)},
        "prevailing_from_deg": float(sectors[int(np.argmax(by_sector))]),
        "share_raised_to_min_speed": raised_share,
        "anemometer_height_m": anemometer_height_m,
        "rows": int(len(table)),
        "frequencies_given_as": "counts (normalised)" if counts else "fractions",
    }
    return weather, summary


def _read_table(path: Path, name: str):
    """(the table, the same cells as text as the user wrote them, the file's line number of
    each row), refused if unreadable, without a column or without rows."""
    try:
        table = pd.read_csv(path, skipinitialspace=True, comment="#")
    except Exception as exc:  # pandas raises several types for unreadable text
        raise InputError(f"{name}: cannot read as CSV: {exc}") from exc
    table.columns = [str(c).strip() for c in table.columns]
    missing = [c for c in COLUMNS if c not in table.columns]
    if missing:
        raise InputError(
            f"{name}: missing column(s) {', '.join(missing)}; need "
            f"{','.join(COLUMNS)} (got {','.join(table.columns)})"
        )
    if table.empty:
        raise InputError(f"{name}: the table has no rows")
    as_written = pd.read_csv(
        path, skipinitialspace=True, comment="#", dtype=str, keep_default_na=False
    )  # for messages: each cell as the user wrote it
    as_written.columns = [str(c).strip() for c in as_written.columns]
    text = Path(path).read_text(encoding="utf-8", errors="replace").splitlines()
    # the lines pandas reads: not blank, not a whole-line comment; the first is the header
    data_lines = [
        i + 1 for i, line in enumerate(text) if line.strip() and not line.lstrip().startswith("#")
    ][1:]
    if len(data_lines) != len(table):  # a layout we did not foresee: count from the header
        data_lines = list(range(2, len(table) + 2))
    return table, as_written, np.asarray(data_lines)


def _numeric_columns(table, as_written, lines, name: str) -> None:
    """Direction, speed and frequency as floats, each a finite number, else the first bad
    cell named by line, as written."""
    for col in ("direction_deg", "speed_m_s", "frequency"):
        values = pd.to_numeric(table[col], errors="coerce")
        bad = values.isna() | ~np.isfinite(values.to_numpy(float, na_value=np.nan))
        if bad.any():
            i = int(np.flatnonzero(bad.to_numpy())[0])
            text = str(as_written[col].iloc[i]).strip()
            what = (
                "a finite number"
                if text.lower().lstrip("+-") in ("nan", "inf", "infinity")
                else "a number"
            )
            raise InputError(f"{name}, line {lines[i]}: {col} must be {what}, got {text!r}")
        table[col] = values.astype(float)


def _checked_values(table, lines, name: str):
    """(stability letters, directions [deg, 0-360), speeds, frequencies), each in range,
    else the first bad row named by line."""
    stability = table["stability"].astype(str).str.strip().str.upper()
    bad = ~stability.isin(STABILITY_CLASSES)
    if bad.any():
        i = int(np.flatnonzero(bad.to_numpy())[0])
        raise InputError(
            f"{name}, line {lines[i]}: stability must be one of A-F (Pasquill class), "
            f"got {table['stability'].iloc[i]!r}"
        )
    direction = table["direction_deg"].to_numpy()
    if ((direction < 0) | (direction > 360)).any():
        i = int(np.flatnonzero((direction < 0) | (direction > 360))[0])
        raise InputError(
            f"{name}, line {lines[i]}: direction_deg must be within 0..360, got {direction[i]}"
        )
    direction = np.round(direction % 360.0, 6)
    speed = table["speed_m_s"].to_numpy()
    if (speed < 0).any():
        i = int(np.flatnonzero(speed < 0)[0])
        raise InputError(f"{name}, line {lines[i]}: speed_m_s must be >= 0, got {speed[i]:g}")
    freq = table["frequency"].to_numpy()
    if (freq < 0).any():
        i = int(np.flatnonzero(freq < 0)[0])
        raise InputError(f"{name}, line {lines[i]}: frequency must be >= 0, got {freq[i]:g}")
    return stability, direction, speed, freq


def _frequency_total(freq: np.ndarray, name: str) -> tuple[float, bool]:
    """(the sum of the frequencies, whether they are whole counts): fractions must sum to 1
    within FRACTION_SUM_TOLERANCE; counts are normalised."""
    with np.errstate(over="ignore"):
        total = freq.sum()
    if not np.isfinite(total):
        raise InputError(
            f"{name}: the frequencies overflow when summed (largest "
            f"{freq.max():g}); give fractions or counts of a sensible size"
        )
    if total <= 0:
        raise InputError(f"{name}: frequencies sum to zero")
    counts = bool(np.all(freq == np.round(freq))) and total > 1.0 + FRACTION_SUM_TOLERANCE
    if not counts and abs(total - 1.0) > FRACTION_SUM_TOLERANCE:
        raise InputError(
            f"{name}: the frequencies sum to {total:.6g}; fractions must sum to 1 "
            f"(within {FRACTION_SUM_TOLERANCE:g}), or give whole-number counts "
            "(hours), which are normalised"
        )
    return float(total), counts


def _sectors(direction: np.ndarray, name: str) -> np.ndarray:
    """The distinct directions, at least 4 and evenly spaced."""
    sectors = np.unique(direction)
    n = len(sectors)
    if n < 4:
        raise InputError(f"{name}: need at least 4 direction sectors, got {n}")
    gaps = np.diff(np.concatenate((sectors, [sectors[0] + 360.0])))
    if not np.allclose(gaps, 360.0 / n, atol=1e-3):
        raise InputError(
            f"{name}: the {n} distinct directions must be evenly spaced "
            f"({360.0 / n:g} deg apart); got {', '.join(f'{d:g}' for d in sectors)}"
        )
    return sectors
