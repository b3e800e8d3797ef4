"""The open global station archive's hourly "lite" files (ISD-Lite) -> hourly rows.

ISD-Lite is a fixed-width text subset of the Integrated Surface Data, one file per station
and year (``<USAF>-<WBAN>-<YEAR>``, often gzip-compressed), one line per hour, times in UTC.
The columns (ISD-Lite Format Documentation, 20 June 2006; confirmed):

=====  ========  ==================================  =======  ==============
field  columns   element                             scale    missing value
=====  ========  ==================================  =======  ==============
1-4    1-13      year, month, day, hour (UTC)        --       --
5      14-19     air temperature [deg C]             10       -9999
6      20-25     dew point [deg C]                   10       -9999
7      26-31     sea-level pressure [hPa]            10       -9999
8      32-37     wind direction [deg], 0 = calm      1        -9999
9      38-43     wind speed [m/s]                    10       -9999
10     44-49     sky condition total coverage code   --       -9999
11     50-55     precipitation, 1 h [mm]             10       -9999 (-1 trace)
12     56-61     precipitation, 6 h [mm]             10       -9999 (-1 trace)
=====  ========  ==================================  =======  ==============

Read here: wind direction and speed, sky cover and temperature; dew point, pressure and
precipitation are not used. The sky condition code is in oktas for 0..8 (0 clear ... 8
overcast); codes 9..19 say "obscured" or describe the sky in words, not in eighths (from
memory), so they are counted and the hour's cloud left missing (Turner's method then has no
cloud for it, so the hour is missing). The format has no ceiling height, so the ceiling is
unknown: Turner's method is applied without it (``stability.py``). Wind direction 0 is the
format's code for a calm; a calm keeps siting's calm rule (``hourly_record.py``).

The format carries no per-value quality flags: the archive quality-controls the values
before it writes this subset (from memory). Every missing-value code found is counted per
element and listed in the summary.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from siting.errors import InputError
from siting.readers.hourly_columns import _check_increasing, _numeric_file

MISSING_CODE = -9999  # every element (ISD-Lite Format Documentation 2006)
# (first, end) character positions of fields 1-12 (0-based, end exclusive)
_FIELDS = (
    (0, 4),
    (5, 7),
    (8, 10),
    (11, 13),
    (13, 19),
    (19, 25),
    (25, 31),
    (31, 37),
    (37, 43),
    (43, 49),
    (49, 55),
    (55, 61),
)
_LINE_LENGTH = 61
_OKTAS_CODES = 8  # sky codes 0..8 are oktas; 9..19 are not eighths


def read_isd_lite_file(path: Path, data: bytes):
    """Read one ISD-Lite station-year file into hourly rows.

    Parameters
    ----------
    path : Path
        The file (its name is used in messages).
    data : bytes
        Its content (gunzipped).

    Returns
    -------
    _RawFile
        direction_deg, speed_m_s [m s-1], cloud_oktas, temperature_c, times in UTC; the source
        description lists the missing codes and non-okta sky codes counted per element.

    Raises
    ------
    InputError
        A line that is not of the format (its number and what is wrong), a date or hour that
        does not exist, times out of order, or a code outside the documented ranges.
    """
    name = path.name
    text = data.decode("latin-1")
    lines, numbers = [], []
    for number, line in enumerate(text.splitlines(), start=1):
        if not line.strip():
            continue
        lines.append(number)
        numbers.append(_fields(name, number, line))
    if not numbers:
        raise InputError(f"{name}: no data lines (an empty ISD-Lite file)")
    table = np.array(numbers, dtype=np.int64)
    rows = np.array(lines, dtype=int)
    time_utc = _times(name, table, rows)
    missing = table == MISSING_CODE
    direction = np.where(missing[:, 7], np.nan, table[:, 7].astype(float))
    speed = np.where(missing[:, 8], np.nan, table[:, 8] / 10.0)
    temperature = np.where(missing[:, 4], np.nan, table[:, 4] / 10.0)
    sky = table[:, 9]
    not_oktas = ~missing[:, 9] & (sky > _OKTAS_CODES)
    cloud = np.where(missing[:, 9] | not_oktas, np.nan, sky.astype(float))
    _check_codes(name, rows, table, missing)
    raw = _numeric_file(
        name,
        time_utc,
        {
            "direction_deg": direction,
            "speed_m_s": speed,
            "cloud_oktas": cloud,
            "temperature_c": temperature,
        },
        rows,
        labels={
            "direction_deg": "wind direction (field 8)",
            "speed_m_s": "wind speed (field 9, m/s)",
            "cloud_oktas": "sky cover code (field 10)",
            "temperature_c": "air temperature (field 5, deg C)",
        },
        source={
            "format": "isd-lite",
            "layout": "ISD-Lite station-year file (fixed-width, scaled integers, UTC)",
            "missing_codes": {
                "wind direction": int(missing[:, 7].sum()),
                "wind speed": int(missing[:, 8].sum()),
                "sky cover": int(missing[:, 9].sum()),
                "air temperature": int(missing[:, 4].sum()),
            },
            "not_in_oktas": {
                "sky cover codes 9-19 (obscured, or not in eighths)": int(not_oktas.sum())
            },
            "quality_flags": "none in this format",
            "ceiling": "not in this format: Turner's method without a ceiling",
        },
    )
    _check_increasing(raw)
    return raw


def _fields(name: str, number: int, line: str) -> list[int]:
    """The twelve integers of one line, by the documented columns."""
    body = line.rstrip()
    if len(body) < _LINE_LENGTH - 6 or len(body) > _LINE_LENGTH:
        raise InputError(
            f"{name}, line {number}: {len(body)} characters; an ISD-Lite line has 12 fixed-width "
            f"fields in {_LINE_LENGTH} characters (got {body[:70]!r})"
        )
    body = body.ljust(_LINE_LENGTH)
    values = []
    for k, (a, b) in enumerate(_FIELDS, start=1):
        cell = body[a:b].strip()
        try:
            values.append(int(cell))
        except ValueError:
            raise InputError(
                f"{name}, line {number}: field {k} (columns {a + 1}-{b}) must be an integer, "
                f"got {body[a:b]!r}"
            ) from None
    return values


def _times(name: str, table: np.ndarray, rows: np.ndarray) -> np.ndarray:
    """UTC datetime64[m] of each line; a date or hour that does not exist is an error."""
    year, month, day, hour = (table[:, k] for k in range(4))
    bad = (month < 1) | (month > 12) | (day < 1) | (day > 31) | (hour < 0) | (hour > 23)
    texts = [f"{y:04d}-{m:02d}-{d:02d}T{h:02d}:00" for y, m, d, h in zip(year, month, day, hour)]
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise InputError(f"{name}, line {rows[i]}: {texts[i]} is not a date and hour (UTC)")
    try:
        dates = np.array([t[:10] for t in texts], dtype="datetime64[D]")
    except ValueError:
        for i, t in enumerate(texts):
            try:
                np.datetime64(t[:10], "D")
            except ValueError:
                raise InputError(f"{name}, line {rows[i]}: {t} is not a date (UTC)") from None
        raise
    return dates.astype("datetime64[m]") + hour.astype("timedelta64[h]").astype("timedelta64[m]")


def _check_codes(name: str, rows: np.ndarray, table: np.ndarray, missing: np.ndarray) -> None:
    """Refuse values outside the documented ranges (not the missing code)."""
    checks = [
        (7, "wind direction (field 8)", (table[:, 7] < 0) | (table[:, 7] > 360), "0..360 deg"),
        (8, "wind speed (field 9)", table[:, 8] < 0, ">= 0 (tenths of m/s)"),
        (9, "sky cover code (field 10)", (table[:, 9] < 0) | (table[:, 9] > 19), "0..19"),
    ]
    for column, what, bad, expected in checks:
        bad = bad & ~missing[:, column]
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise InputError(
                f"{name}, line {rows[i]}: {what} must be {expected} or {MISSING_CODE} "
                f"(missing), got {table[i, column]}"
            )
