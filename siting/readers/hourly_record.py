"""Hourly weather records: station CSV files -> :class:`HourlyWeather`, summaries, products.

An adapter: reads, checks and converts; the physics is elsewhere (solar position in
``solar.py``, Turner's stability classes in ``stability.py``, the hour-by-hour plume in
``hourly.py``). What lives here:

* :func:`read_hourly_record` -- one or more hourly CSV records -> :class:`HourlyWeather`.
* :func:`frequency_table_from_hourly` -- an hourly record -> a frequency table (DataFrame).
* :func:`compass_words`, :func:`direction_step_deg`, :func:`hours_by_sector`,
  :func:`speed_class_index`, :func:`speed_class_labels` -- naming, binning and classing of
  directions and speeds, shared with the weather charts of ``figures.py``.

What is not here: reading a frequency table (``weather.py``), drawing the charts
(``figures.py``), and writing the files of ``siting weather`` (``weather_outputs.py``): a
reader writes nothing.

Hourly record CSV
-----------------
Columns ``time,direction_deg,speed_m_s`` plus exactly one of ``stability`` (Pasquill A-F) or
``cloud_oktas`` (total cloud, whole oktas 0..8; optional ``ceiling_ft``), and optional
``temperature_c``. Blank lines and lines starting with ``#`` are skipped; other columns are
ignored with a warning. Several files (several years) are joined in time order; times that
overlap between files are an error.

* Time: ISO 8601 with a UTC offset (``2025-01-01T00:00+01:00``, ``...Z``), or naive local times
  plus ``utc_offset_h``; a file may not mix the two. Every time must be on a whole hour as
  written (minutes and seconds :00). Times are never rounded: a reading at :50 belongs to
  another hour (some stations report then), and moving it silently would hide that.
* Direction: degrees the wind blows FROM, clockwise from north, 0..360; 360 (north) is stored
  as 0. Speed: m/s at the anemometer height, >= 0.
* Missing hours: the expected timeline runs hourly from the first to the last time of the
  record. An hour absent from the files, or with an empty required value (``""``, ``NA``,
  ``NaN``), is missing. Missing hours are counted and listed as gaps; they are NEVER filled or
  interpolated, simply left out, so every mean is over the hours observed. If more than
  ``max_missing_percent`` of the expected hours are missing the record is refused.
* Calms (speed < ``calm_threshold_m_s``): a calm hour keeps the direction recorded for it;
  where a calm has no usable direction (empty, or 0, the usual station code for "calm, no
  direction"), it takes the direction of the last non-calm hour before it (calms before the
  first non-calm hour take that hour's direction). Its speed is raised to
  ``min_wind_speed_m_s``: a Gaussian plume needs u > 0, and since light winds give the highest
  concentrations, raising calms to a floor rather than dropping them keeps the result
  cautious. Hours at or above the calm threshold but below the floor are raised too. Both
  shares are reported. Outside calms, 0 is read as north, like 360.
* Direction step: directions reported in steps (10 deg at many stations) stand for the
  interval they were reported in. The step is given (``direction_step_deg``, 0..45) or
  inferred from the directions (:func:`direction_step_deg`: 22.5, 10 or 5 deg when every
  direction is a multiple of it); each hour's plume is then spread evenly over that interval
  (``hourly.spread_lateral_density_per_m``). An inferred step of 1 deg or finer is treated as
  exact: no spreading (our choice: whole-degree records are what "exact" means at a station,
  and a 1 deg spread changes little). A given step is always used as given.
* Stability: the given class, or Turner's method (``stability.turner_stability_index``) from
  the observed (not raised) wind speed, cloud cover, ceiling and the solar elevation and night
  flag at the site for the hour's time stamp (``solar.py``).
"""

from __future__ import annotations

import csv
import warnings
from collections.abc import Sequence
from dataclasses import dataclass
from itertools import pairwise
from pathlib import Path

import numpy as np
import pandas as pd

from siting.dispersion.hourly import HourlyWeather
from siting.errors import InputError, InputFileError, WeatherWarning
from siting.physics.plume import STABILITY_CLASSES
from siting.physics.solar import is_night, solar_elevation_deg
from siting.physics.stability import turner_stability_index

HOURLY_REQUIRED = ("time", "direction_deg", "speed_m_s")
HOURLY_OPTIONAL = ("stability", "cloud_oktas", "ceiling_ft", "temperature_c")
#: Cell texts read as "no value" in an hourly record (compared case-insensitively).
MISSING_MARKERS = frozenset({"", "na", "nan", "n/a"})
STABILITY_GIVEN = "given"
STABILITY_TURNER = "Turner's method from cloud cover and solar elevation (NOAA solar position)"
CALM_RULE = (
    "A calm hour (speed below calm_threshold_m_s) keeps the direction recorded for it; where it "
    "has no usable direction (empty, or 0 = the station code for calm) it takes the direction "
    "of the last non-calm hour. Its speed is raised to min_wind_speed_m_s (a Gaussian plume "
    "needs u > 0; light winds give the highest concentrations, so raising calms to a floor "
    "rather than dropping them keeps the result cautious). Hours at or above the calm "
    "threshold but below the floor are raised too."
)
MISSING_RULE = (
    "The expected timeline runs hourly from the first to the last time of the record; hours "
    "absent from the file(s) or with an empty required value are missing. Missing hours are "
    "not filled: they are left out, and every figure is over the hours used."
)
#: Default speed class edges [m s-1] of frequency tables and weather charts; the last class is
#: open (>= 11 m/s). Our own choice, common practice, no source.
DEFAULT_SPEED_EDGES_M_S = (0.0, 1.5, 3.0, 5.0, 8.0, 11.0)
#: 16-point compass, from north clockwise, in words.
COMPASS_POINTS = (
    "north",
    "north-north-east",
    "north-east",
    "east-north-east",
    "east",
    "east-south-east",
    "south-east",
    "south-south-east",
    "south",
    "south-south-west",
    "south-west",
    "west-south-west",
    "west",
    "west-north-west",
    "north-west",
    "north-north-west",
)
HOURS_PER_YEAR = 8760  # 365 d x 24 h: a common (non-leap) year
_HOURS_PER_MEAN_YEAR = 8766.0  # 365.25 d x 24 h, for the record length in years
_CALM_WARN_PERCENT = 10.0  # our choice: more calms than this deserve a look at the station
_LONG_GAP_H = 24  # our choice: a gap longer than a day may hide a season's pattern
_MAX_GAPS_LISTED = 20
_FAST_SPEED_M_S = 50.0  # hourly means above this suggest knots or gusts (our choice)
_TEMPERATURE_RANGE_C = (-80.0, 60.0)  # outside: surely not deg C (kelvin, deg F?)
_DIRECTION_STEPS_DEG = (22.5, 10.0, 5.0, 1.0)  # reporting resolutions recognised
#: an inferred step at or below this is taken as exact directions, not spread (our choice)
_EXACT_STEP_DEG = 1.0
_MAX_DIRECTION_STEP_DEG = 45.0  # a coarser step (8 points or fewer) is no direction at all
_TIME_RE = (
    r"^(?P<date>\d{4}-\d{2}-\d{2})[T ](?P<hour>\d{2}):(?P<minute>\d{2})"
    r"(?::(?P<second>\d{2}(?:\.\d+)?))?"
    r"(?P<offset>Z|[+-]\d{2}(?::?\d{2})?)?$"
)


# --- reading a record ----------------------------------------------------------------------------


class _RawFile:
    """One hourly CSV as read: stripped cell texts by column, line numbers, UTC times."""

    def __init__(
        self,
        name: str,
        columns: dict[str, np.ndarray],
        lines: np.ndarray,
        time_utc: np.ndarray,
        offsets: set[str],
    ):
        self.name = name
        self.columns = columns
        self.lines = lines
        self.time_utc = time_utc  # datetime64[m]
        self.offsets = offsets


@dataclass
class _Rows:
    """Every row of a record's files end to end, in time order, as checked values.

    Numbers are NaN where empty. ``method_value`` is what sets the stability class: the given
    class 0..5 (-1 where empty) when ``given_class``, else the cloud cover [oktas].
    """

    files: list[_RawFile]  # in time order
    direction_deg: np.ndarray
    speed_m_s: np.ndarray
    temperature_c: np.ndarray
    ceiling_ft: np.ndarray
    given_class: bool
    method_value: np.ndarray
    time_utc: np.ndarray  # datetime64[m]
    line: np.ndarray  # the row's line number in its file
    file_of: np.ndarray  # the row's file, an index into files
    written: np.ndarray  # the row's time text as written

    @property
    def names(self) -> str:
        """The file names, comma-separated, for messages."""
        return ", ".join(f.name for f in self.files)

    def where(self, i: int) -> str:
        """'<file>, line <n>' of row i."""
        return _where(self.files[self.file_of[i]].name, self.line[i])


@dataclass
class _Timeline:
    """The rows on the hourly timeline: the hour of each, the calms and the hours used."""

    hour_index: np.ndarray  # whole hours since the record's first time, per row
    n_expected: int  # hours from the first to the last time, both included
    calm: np.ndarray  # speed below the calm threshold (False where empty), per row
    valid: np.ndarray  # the row is an hour used (missing-hour rule), per row
    gaps: list[dict]  # runs of missing hours, longest first (_gaps)

    @property
    def used(self) -> np.ndarray:
        """Row indices of the hours used, in time order."""
        return np.flatnonzero(self.valid)

    @property
    def n_used(self) -> int:
        return int(self.valid.sum())

    @property
    def n_missing(self) -> int:
        return self.n_expected - self.n_used

    @property
    def missing_percent(self) -> float:
        return 100.0 * self.n_missing / self.n_expected


def _where(name: str, line: int) -> str:
    return f"{name}, line {line}"


def _is_missing(texts: np.ndarray) -> np.ndarray:
    """True where a cell holds no value (empty, NA, NaN, n/a)."""
    if texts.size == 0:
        return np.zeros(0, dtype=bool)
    return pd.Series(texts, dtype=object).str.lower().isin(MISSING_MARKERS).to_numpy()


def _numbers(raw: _RawFile, column: str) -> np.ndarray:
    """A column as floats, NaN where empty; anything else that is not a finite number fails."""
    texts = raw.columns[column]
    missing = _is_missing(texts)
    values = pd.to_numeric(
        pd.Series(np.where(missing, "nan", texts), dtype=object), errors="coerce"
    ).to_numpy(dtype=float)
    bad = ~missing & ~np.isfinite(values)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise InputError(
            f"{_where(raw.name, raw.lines[i])}: {column} must be a number, got {texts[i]!r}"
        )
    return values


def _check_range(
    raw: _RawFile, column: str, values: np.ndarray, bad: np.ndarray, expected: str
) -> None:
    """Raise naming the first row where ``bad`` holds (empty cells, NaN, are never bad)."""
    if values.dtype.kind == "f":
        bad = bad & np.isfinite(values)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise InputError(
            f"{_where(raw.name, raw.lines[i])}: {column} must be {expected}, "
            f"got {raw.columns[column][i]!r}"
        )


def _read_rows(path: Path) -> tuple[list[str], list[list[str]], list[int], int, list[str]]:
    """Header, data rows (stripped cells), their 1-based line numbers, the header's line and
    the ignored columns; skips blank and # lines. The header is checked before any row."""
    name = path.name
    if not path.is_file():
        raise InputFileError(f"{path}: hourly weather file not found")
    header, header_line, rows, lines, ignored = None, 0, [], [], []
    try:
        with open(path, newline="", encoding="utf-8-sig") as handle:
            reader = csv.reader(handle)
            for cells in reader:
                cells = [c.strip() for c in cells]
                if not any(cells) or cells[0].startswith("#"):
                    continue
                if header is None:
                    header, header_line = cells, reader.line_num
                    ignored = _check_header(name, header, header_line)
                    continue
                if len(cells) != len(header):
                    raise InputError(
                        f"{_where(name, reader.line_num)}: {len(cells)} values, "
                        f"but the header line {header_line} has {len(header)} "
                        f"columns ({','.join(header)})"
                    )
                rows.append(cells)
                lines.append(reader.line_num)
    except UnicodeDecodeError as exc:
        raise InputError(f"{name}: not UTF-8 text ({exc.reason} at byte {exc.start})") from exc
    except csv.Error as exc:
        raise InputError(f"{name}: cannot read as CSV: {exc}") from exc
    if header is None:
        raise InputError(
            f"{name}: the file is empty; need a header "
            f"{','.join(HOURLY_REQUIRED)},stability|cloud_oktas and hourly rows"
        )
    return header, rows, lines, header_line, ignored


def _check_header(name: str, header: list[str], header_line: int) -> list[str]:
    """Columns to ignore; raise on duplicated, missing or ambiguous ones."""
    duplicated = sorted({c for c in header if header.count(c) > 1})
    if duplicated:
        raise InputError(
            f"{_where(name, header_line)}: column(s) {', '.join(duplicated)} appear more than once"
        )
    missing = [c for c in HOURLY_REQUIRED if c not in header]
    has_class, has_cloud = "stability" in header, "cloud_oktas" in header
    if missing or not (has_class or has_cloud):
        need = missing + ([] if has_class or has_cloud else ["stability or cloud_oktas"])
        raise InputError(
            f"{_where(name, header_line)}: missing column(s) {', '.join(need)}; "
            f"need {','.join(HOURLY_REQUIRED)} plus stability (A-F) or "
            f"cloud_oktas (0-8), optional ceiling_ft, temperature_c "
            f"(got {','.join(header)})"
        )
    if has_class and has_cloud:
        raise InputError(
            f"{_where(name, header_line)}: give either a stability column or a "
            "cloud_oktas column, not both (which one should set the class?)"
        )
    return [c for c in header if c not in HOURLY_REQUIRED + HOURLY_OPTIONAL]


def _offset_minutes(text: str) -> int:
    """'Z', '+01:00', '-0530', '+02' -> minutes east of UTC."""
    if text == "Z":
        return 0
    sign = -1 if text[0] == "-" else 1
    digits = text[1:].replace(":", "")
    return sign * (int(digits[:2]) * 60 + (int(digits[2:]) if len(digits) > 2 else 0))


def _parse_times(
    name: str, texts: np.ndarray, lines: np.ndarray, utc_offset_h: float | None
) -> tuple[np.ndarray, set[str]]:
    """Time texts -> UTC datetime64[m]; the offsets written in the file (empty if naive)."""
    parts = pd.Series(texts, dtype=object).str.extract(_TIME_RE)
    bad = parts["date"].isna().to_numpy()
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise InputError(
            f"{_where(name, lines[i])}: time must be ISO 8601 like "
            f"2025-01-01T00:00+01:00 (or naive local time with utc_offset_h), "
            f"got {texts[i]!r}"
        )
    second = parts["second"].fillna("00").astype(float).to_numpy()
    off_hour = (parts["minute"].to_numpy() != "00") | (second != 0)
    if off_hour.any():
        i = int(np.flatnonzero(off_hour)[0])
        raise InputError(
            f"{_where(name, lines[i])}: time {texts[i]!r} is not on a whole hour; "
            "hourly records must have minutes :00 (times are not rounded: shift "
            "the time stamps if your station reports at another minute)"
        )
    has_offset = parts["offset"].notna().to_numpy()
    if has_offset.any() and not has_offset.all():
        i, j = int(np.flatnonzero(has_offset)[0]), int(np.flatnonzero(~has_offset)[0])
        raise InputError(
            f"{name}: times mix UTC offsets and naive times: line {lines[i]} "
            f"{texts[i]!r} has an offset, line {lines[j]} {texts[j]!r} has none; "
            "write every time with its offset, or none and give utc_offset_h"
        )
    local_text = (parts["date"] + "T" + parts["hour"] + ":00").to_numpy(dtype=str)
    try:
        local = np.array(local_text, dtype="datetime64[m]")
    except ValueError:
        for i, text in enumerate(local_text):
            try:
                np.datetime64(text, "m")
            except ValueError:
                raise InputError(
                    f"{_where(name, lines[i])}: time {texts[i]!r} is not a valid date and hour"
                ) from None
        raise
    if not has_offset.all():
        if utc_offset_h is None:
            raise InputError(
                f"{_where(name, lines[0])}: time {texts[0]!r} has no UTC offset; "
                "write times as 2025-01-01T00:00+01:00, or give utc_offset_h, the offset "
                "of the file's clock from UTC in hours (in a scenario: [weather] "
                "utc_offset_h)",
                parameters=("utc_offset_h",),
            )
        return local - np.timedelta64(round(utc_offset_h * 60), "m"), set()
    offsets = parts["offset"].to_numpy(dtype=object)
    distinct = {text: _offset_minutes(text) for text in set(offsets.tolist())}
    for text, minutes in distinct.items():
        digits = text[1:].replace(":", "") if text != "Z" else "00"
        if len(digits) > 2 and int(digits[2:]) >= 60:
            i = int(np.flatnonzero(offsets == text)[0])
            raise InputError(
                f"{_where(name, lines[i])}: UTC offset {text} has minutes "
                f"{digits[2:]}; minutes must be 00-59"
            )
        if abs(minutes) > 14 * 60:
            i = int(np.flatnonzero(offsets == text)[0])
            raise InputError(f"{_where(name, lines[i])}: UTC offset {text} is beyond +-14 h")
    shift = np.array([distinct[t] for t in offsets], dtype="timedelta64[m]")
    return local - shift, set(distinct)


def _read_hourly_file(path: Path, utc_offset_h: float | None) -> _RawFile:
    """Read one hourly CSV, parse its times and check they increase; a WeatherWarning for
    ignored columns, an unused utc_offset_h and an unused ceiling_ft."""
    name = path.name
    header, rows, lines, header_line, ignored = _read_rows(path)
    if not rows:
        raise InputError(f"{name}: no data rows after the header (line {header_line})")
    table = np.array(rows, dtype=object).reshape(len(rows), len(header))
    columns = {
        c: table[:, k]
        for k, c in enumerate(header)  # object arrays of str
        if c in HOURLY_REQUIRED + HOURLY_OPTIONAL
    }
    line_numbers = np.asarray(lines, dtype=int)
    empty_time = columns["time"] == ""
    if empty_time.any():
        i = int(np.flatnonzero(empty_time)[0])
        raise InputError(
            f"{_where(name, line_numbers[i])}: time is empty; every row needs its "
            "time (leave out the row of a missing hour instead)"
        )
    time_utc, offsets = _parse_times(name, columns["time"], line_numbers, utc_offset_h)
    step = np.diff(time_utc).astype(np.int64)
    if (step <= 0).any():
        i = int(np.flatnonzero(step <= 0)[0]) + 1
        what = "repeats the time of" if step[i - 1] == 0 else "is earlier than"
        raise InputError(
            f"{_where(name, line_numbers[i])}: time {columns['time'][i]!r} {what} "
            f"line {line_numbers[i - 1]} ({columns['time'][i - 1]!r}); rows must be "
            "in increasing time order without duplicates"
        )
    if ignored:
        _warn(
            f"{name}: column(s) {', '.join(ignored)} ignored (known columns: "
            f"{', '.join(HOURLY_REQUIRED + HOURLY_OPTIONAL)})"
        )
    if offsets and utc_offset_h is not None:
        given = {_offset_minutes(o) for o in offsets}
        if given != {round(utc_offset_h * 60)}:
            _warn(
                f"{name}: the times carry their own UTC offsets "
                f"({', '.join(sorted(offsets))}); the utc_offset_h given ({utc_offset_h:g}) "
                "is not used for this file",
                parameters=("utc_offset_h",),
            )
    if "ceiling_ft" in columns and "stability" in columns:
        _warn(
            f"{name}: ceiling_ft is used only with cloud_oktas; ignored because "
            "the stability class is given"
        )
    return _RawFile(name, columns, line_numbers, time_utc, offsets)


def _warn(message: str, parameters: tuple[str, ...] = ()) -> None:
    """Issue a WeatherWarning about the record (shown at the reader's caller's call)."""
    warnings.warn(WeatherWarning(message, parameters=parameters), stacklevel=3)


def _join_files(files: list[_RawFile]) -> list[_RawFile]:
    """Files in time order; overlapping times between files are an error."""
    kinds = {("stability" in f.columns) for f in files}
    if len(kinds) > 1:
        given = [f.name for f in files if "stability" in f.columns]
        cloud = [f.name for f in files if "stability" not in f.columns]
        raise InputError(
            f"hourly records mix stability sources: {', '.join(given)} give "
            f"stability, {', '.join(cloud)} give cloud_oktas; use one kind"
        )
    files = sorted(files, key=lambda f: f.time_utc[0])
    for before, after in pairwise(files):
        if after.time_utc[0] <= before.time_utc[-1]:
            raise InputError(
                f"{after.name}, line {after.lines[0]}: time "
                f"{after.columns['time'][0]!r} overlaps {before.name}, which runs "
                f"to {before.columns['time'][-1]!r} (line {before.lines[-1]}); "
                "hourly files must not overlap"
            )
    return files


def _file_values(raw: _RawFile) -> dict[str, np.ndarray]:
    """A file's columns as checked numbers (NaN where empty); stability as 0..5, -1 where empty.

    Keys: direction_deg, speed_m_s, temperature_c, ceiling_ft (NaN where absent) and either
    stability or cloud_oktas.
    """
    n = raw.lines.size
    d = _numbers(raw, "direction_deg")
    _check_range(
        raw,
        "direction_deg",
        d,
        (d < 0) | (d > 360),
        "within 0..360 (degrees the wind blows from, clockwise from north)",
    )
    u = _numbers(raw, "speed_m_s")
    _check_range(raw, "speed_m_s", u, u < 0, ">= 0")
    out = {
        "direction_deg": d,
        "speed_m_s": u,
        "temperature_c": np.full(n, np.nan),
        "ceiling_ft": np.full(n, np.nan),
    }
    if "stability" in raw.columns:
        index = (
            pd.Series(raw.columns["stability"], dtype=object)
            .str.upper()
            .map({c: i for i, c in enumerate(STABILITY_CLASSES)})
            .fillna(-1)
            .to_numpy(dtype=int)
        )  # -1: empty or unknown
        empty = _is_missing(raw.columns["stability"])
        _check_range(raw, "stability", index, (index < 0) & ~empty, "a Pasquill class A-F")
        out["stability"] = index
    else:
        c = _numbers(raw, "cloud_oktas")
        _check_range(
            raw,
            "cloud_oktas",
            c,
            (c < 0) | (c > 8) | (c != np.round(c)),
            "whole oktas 0..8 (9, sky obscured, is not accepted)",
        )
        out["cloud_oktas"] = c
        if "ceiling_ft" in raw.columns:
            h = _numbers(raw, "ceiling_ft")
            _check_range(raw, "ceiling_ft", h, h < 0, ">= 0 (feet; empty = none reported)")
            out["ceiling_ft"] = h
    if "temperature_c" in raw.columns:
        t = _numbers(raw, "temperature_c")
        lo, hi = _TEMPERATURE_RANGE_C
        _check_range(raw, "temperature_c", t, (t < lo) | (t > hi), f"within {lo:g}..{hi:g} (deg C)")
        out["temperature_c"] = t
    return out


def _utc_text(t) -> str:
    return str(np.datetime64(t, "m")) + "Z"


def _gaps(valid_index: np.ndarray, n_expected: int, t0) -> list[dict]:
    """Runs of missing hours, longest first (then earliest): start, end (UTC), hours."""
    edges = np.concatenate(([-1], valid_index, [n_expected]))
    length = np.diff(edges) - 1
    where = np.flatnonzero(length > 0)
    order = sorted(where, key=lambda k: (-length[k], edges[k]))
    hour = np.timedelta64(60, "m")
    return [
        {
            "start_utc": _utc_text(t0 + (edges[k] + 1) * hour),
            "end_utc": _utc_text(t0 + (edges[k] + length[k]) * hour),
            "hours": int(length[k]),
        }
        for k in order
    ]


def compass_words(direction_deg: float) -> str:
    """'from the south-west (225 deg)': the nearest of the 16 compass points, in words.

    Parameters
    ----------
    direction_deg : float
        Direction the wind blows from [deg clockwise from north].

    Returns
    -------
    str
        The compass point and the direction.
    """
    k = int(np.floor((direction_deg % 360.0) / 22.5 + 0.5)) % 16
    return f"from the {COMPASS_POINTS[k]} ({direction_deg % 360.0:g} deg)"


def direction_step_deg(direction_deg) -> float:
    """Reporting resolution of directions [deg]: 22.5, 10, 5 or 1 if all are multiples, else 0.

    Parameters
    ----------
    direction_deg : ndarray
        The record's directions [deg].

    Returns
    -------
    float
        The coarsest of those steps all directions are multiples of [deg]; 0 for none.
    """
    d = np.asarray(direction_deg, dtype=float)
    for step in _DIRECTION_STEPS_DEG:
        if _all_multiples(d, step):
            return step
    return 0.0


def hours_by_sector(
    direction_deg, n_sectors: int, step_deg: float | None = None, weights=None
) -> np.ndarray:
    """Hours (or summed weights) per direction sector, each reported direction spread evenly
    over its reporting step.

    Parameters
    ----------
    direction_deg : ndarray
        Directions the wind blows FROM [deg], 0..360.
    n_sectors : int
        Sectors of 360/n deg centred on 0, n/360, ... [deg], >= 1.
    step_deg : float, optional
        Reporting resolution [deg]; None detects it (:func:`direction_step_deg`), 0 means
        continuous (each hour counts whole in the sector that holds it).
    weights : ndarray, optional
        Weight of each hour (default 1).

    Returns
    -------
    hours : ndarray, (n_sectors,)
        Sums to the total weight.

    Notes
    -----
    A direction reported as 30 deg in 10 deg steps stands for 25..35 deg; spreading it over that
    interval before binning keeps sectors that hold two or three reported values (16 sectors
    from 10 deg data) from alternating in height. Our choice, no source.
    """
    d = np.asarray(direction_deg, dtype=float) % 360.0
    w = np.ones_like(d) if weights is None else np.asarray(weights, dtype=float)
    step = direction_step_deg(d) if step_deg is None else float(step_deg)
    width = 360.0 / n_sectors
    if step <= 0:
        k = np.floor(d / width + 0.5).astype(int) % n_sectors
        return np.bincount(k, weights=w, minlength=n_sectors).astype(float)
    centres = np.arange(n_sectors) * width
    r = (d[:, None] - centres[None, :] + 180.0) % 360.0 - 180.0  # offset from each centre
    overlap = np.minimum(r + step / 2, width / 2) - np.maximum(r - step / 2, -width / 2)
    return (np.clip(overlap, 0.0, None) / step * w[:, None]).sum(axis=0)


def speed_class_index(
    speed_m_s, speed_edges_m_s: Sequence[float] = DEFAULT_SPEED_EDGES_M_S
) -> np.ndarray:
    """Speed class of each hour: i where edge[i] <= u < edge[i+1]; the last class is open.

    Parameters
    ----------
    speed_m_s : ndarray
        Hourly wind speeds [m s-1].
    speed_edges_m_s : sequence of float
        Lower edges of the classes [m s-1], from 0, increasing.

    Returns
    -------
    ndarray of int
        Class of each hour.

    Raises
    ------
    InputError
        The edges do not start at 0 and increase.
    """
    edges = _checked_edges(speed_edges_m_s)
    return np.clip(
        np.searchsorted(edges, np.asarray(speed_m_s, float), side="right") - 1, 0, edges.size - 1
    )


def speed_class_labels(speed_edges_m_s: Sequence[float] = DEFAULT_SPEED_EDGES_M_S) -> list[str]:
    """'< 1.5', '1.5-3', ..., '>= 11' [m/s], one per class of :func:`speed_class_index`.

    Parameters
    ----------
    speed_edges_m_s : sequence of float
        Lower edges of the classes [m s-1], from 0, increasing.

    Returns
    -------
    list of str
        One label per class.

    Raises
    ------
    InputError
        The edges do not start at 0 and increase.
    """
    edges = _checked_edges(speed_edges_m_s)
    labels = [f"{a:g}-{b:g}" for a, b in pairwise(edges)] + [f">= {edges[-1]:g}"]
    labels[0] = f"< {edges[1]:g}" if edges.size > 1 and edges[0] == 0 else labels[0]
    return labels


def _checked_edges(speed_edges_m_s) -> np.ndarray:
    edges = np.asarray(speed_edges_m_s, dtype=float)
    if edges.ndim != 1 or edges.size < 1 or edges[0] != 0 or (np.diff(edges) <= 0).any():
        raise InputError(f"speed_edges_m_s must start at 0 and increase, got {list(edges)}")
    return edges


def read_hourly_record(  # > 80 lines only for its docstring (~70); the body is ~45
    paths,
    latitude_deg: float,
    longitude_deg: float,
    *,
    anemometer_height_m: float = 10.0,
    utc_offset_h: float | None = None,
    calm_threshold_m_s: float = 0.5,
    min_wind_speed_m_s: float = 1.0,
    max_missing_percent: float = 10.0,
    direction_step_deg: float | None = None,
) -> tuple[HourlyWeather, dict]:
    """Read, check and prepare an hourly weather record (one or several CSV files).

    Parameters
    ----------
    paths : path or sequence of paths
        One CSV file, or several (e.g. one per year), joined in time order. Format, time rule,
        calm rule and missing-hour rule: see the module docstring.
    latitude_deg, longitude_deg : float
        Site position [deg], north and east positive, -90..90 and -180..180; sets the solar
        elevation of Turner's method.
    anemometer_height_m : float
        Height of the wind measurement [m], > 0.
    utc_offset_h : float, optional
        Offset of the file's clock from UTC [h] (+1 = one hour ahead of UTC), -14..14; needed
        when the times are naive, unused for times with their own offset.
    calm_threshold_m_s : float
        Hours with speed below this are calms [m s-1], >= 0.
    min_wind_speed_m_s : float
        Floor speed: calms and light winds are raised to it [m s-1], > 0.
    max_missing_percent : float
        Largest share of missing hours accepted [%], 0..100.
    direction_step_deg : float, optional
        Interval the directions were reported in [deg], 0..45; each hour's plume is spread
        evenly over it (0: exact directions). None infers it from the directions
        (:func:`direction_step_deg`); an inferred step of 1 deg or finer is not spread.

    Returns
    -------
    weather : HourlyWeather
        The hours used (valid hours only), in time order, UTC.
    summary : dict
        Keys: files, latitude_deg, longitude_deg, first_time_utc, last_time_utc,
        time_offsets, hours_expected, hours_used, hours_missing, missing_percent, gap_count,
        gaps (longest first, at most 20: start_utc, end_utc, hours), calm_threshold_m_s,
        min_wind_speed_m_s, calm_hours, calm_percent, calm_direction_filled_hours,
        raised_to_min_speed_percent, mean_speed_m_s, mean_observed_speed_m_s,
        prevailing_from_deg, prevailing_from_words, direction_step_deg (the reporting step,
        given or inferred), direction_spread_deg (the interval each hour's plume is spread
        over, in HourlyWeather.direction_step_deg), direction_rule (in words), stability_share
        (A..F fractions of the hours used), stability_method, temperature_c (min, mean, max,
        hours_without, or None), years_covered (calendar years as written), record_years,
        anemometer_height_m, calm_rule, missing_rule.

    Warns
    -----
    WeatherWarning
        Legal but doubtful content: calms above 10 %, a record shorter than a year, gaps
        longer than 24 h, ignored columns, very high speeds, directions that are not
        multiples of a given direction step.

    Raises
    ------
    InputFileError
        A file does not exist.
    InputError
        Any malformed content, naming the file, the line (header = line 1) and the value; or
        more than ``max_missing_percent`` missing hours (with the share and the longest gap);
        or a direction_step_deg outside 0..45 (named ``weather.direction_step_deg``).
    """
    _check_options(
        latitude_deg,
        longitude_deg,
        anemometer_height_m,
        utc_offset_h,
        calm_threshold_m_s,
        min_wind_speed_m_s,
        max_missing_percent,
    )
    given_step = _checked_direction_step(direction_step_deg)
    files = _read_files(paths, utc_offset_h)
    rows = _joined_rows(files)
    hour_index, n_expected = _hour_index(rows)
    timeline = _usable_hours(rows, hour_index, n_expected, calm_threshold_m_s, max_missing_percent)
    direction, filled = _calm_directions(rows, timeline)
    used = timeline.used
    times_s = rows.time_utc[used].astype("datetime64[s]")
    stability_index = _stability_index(rows, used, times_s, latitude_deg, longitude_deg)
    used_direction = direction[used].astype(float)
    step, spread = _direction_step_and_spread(used_direction, given_step, rows)
    weather = HourlyWeather(
        times_s,
        used_direction,
        np.maximum(rows.speed_m_s[used], min_wind_speed_m_s),
        stability_index,
        rows.temperature_c[used].astype(float),
        float(anemometer_height_m),
        spread,
    )
    summary = _summary(
        rows,
        timeline,
        weather,
        filled,
        step=step,
        step_given=given_step is not None,
        latitude_deg=latitude_deg,
        longitude_deg=longitude_deg,
        utc_offset_h=utc_offset_h,
        calm_threshold_m_s=calm_threshold_m_s,
        min_wind_speed_m_s=min_wind_speed_m_s,
        anemometer_height_m=anemometer_height_m,
    )
    _warn_about_record(summary, rows, timeline, calm_threshold_m_s, min_wind_speed_m_s)
    return weather, summary


def _read_files(paths, utc_offset_h: float | None) -> list[_RawFile]:
    """Read every file of the record and join them.

    Each file is read, its header and times checked (:func:`_read_hourly_file`), in the order
    given; then the files are put in time order and checked for overlaps (:func:`_join_files`).
    Returns the files in time order (their warnings are issued in the order the files were
    given).
    """
    paths = [Path(paths)] if isinstance(paths, (str, Path)) else [Path(p) for p in paths]
    if not paths:
        raise InputError("hourly weather: no file given")
    files = [_read_hourly_file(path, utc_offset_h) for path in paths]
    return _join_files(files)


def _joined_rows(files: list[_RawFile]) -> _Rows:
    """Check the values row by row and put the files' rows end to end.

    Each file's columns are checked and turned into numbers (:func:`_file_values`), file by file
    in time order, so the first bad value of the earliest file is the one named. Returns every
    row of the record as one :class:`_Rows`.
    """
    values = [_file_values(raw) for raw in files]
    direction, speed, temperature, ceiling = (
        np.concatenate([v[key] for v in values])
        for key in ("direction_deg", "speed_m_s", "temperature_c", "ceiling_ft")
    )
    given_class = "stability" in files[0].columns  # one kind for all files (_join_files)
    return _Rows(
        files=files,
        direction_deg=direction,
        speed_m_s=speed,
        temperature_c=temperature,
        ceiling_ft=ceiling,
        given_class=given_class,
        method_value=np.concatenate(
            [v["stability" if given_class else "cloud_oktas"] for v in values]
        ),
        time_utc=np.concatenate([f.time_utc for f in files]),
        line=np.concatenate([f.lines for f in files]),
        file_of=np.concatenate([np.full(f.lines.size, k) for k, f in enumerate(files)]),
        written=np.concatenate([f.columns["time"] for f in files]),
    )


def _hour_index(rows: _Rows) -> tuple[np.ndarray, int]:
    """Place every row on the hourly timeline that starts at the record's first time.

    Returns each row's hour index (whole hours since the first time) and the hours expected
    (first to last time, both included). Raises where a time is not a whole number of hours
    after the first (files with different UTC offsets can do that).
    """
    t0 = rows.time_utc[0]
    since_minutes = (rows.time_utc - t0).astype(np.int64)
    off_grid = since_minutes % 60 != 0
    if off_grid.any():
        i = int(np.flatnonzero(off_grid)[0])
        raise InputError(
            f"{rows.where(i)}: time {rows.written[i]!r} is not "
            f"a whole number of hours after the record's first time "
            f"({_utc_text(t0)}); check the UTC offsets"
        )
    hour_index = since_minutes // 60
    return hour_index, int(hour_index[-1]) + 1


def _usable_hours(
    rows: _Rows,
    hour_index: np.ndarray,
    n_expected: int,
    calm_threshold_m_s: float,
    max_missing_percent: float,
) -> _Timeline:
    """The missing-hour rule: which hours can be used, the calms and the gaps.

    An hour is used when its speed and its class (or cloud cover) are given and its direction
    too, unless it is a calm (the calm rule gives it one). Returns the :class:`_Timeline`.
    Raises when no hour can be used, when more than ``max_missing_percent`` of the expected
    hours are missing, or when every usable hour is calm (no direction to give the calms).
    """
    calm = rows.speed_m_s < calm_threshold_m_s  # False where speed is NaN
    if rows.given_class:
        has_class = rows.method_value >= 0
    else:
        has_class = np.isfinite(rows.method_value)
    valid = np.isfinite(rows.speed_m_s) & has_class & (np.isfinite(rows.direction_deg) | calm)
    gaps = _gaps(hour_index[valid], n_expected, rows.time_utc[0])
    timeline = _Timeline(hour_index, n_expected, calm, valid, gaps)
    names = rows.names
    if timeline.n_used == 0:
        raise InputError(f"{names}: no usable hour (every row lacks a required value)")
    if timeline.missing_percent > max_missing_percent:
        longest = gaps[0]
        raise InputError(
            f"{names}: {timeline.missing_percent:.1f} % of the {n_expected} expected hours "
            f"are missing ({timeline.n_missing} h), more than max_missing_percent = "
            f"{max_missing_percent:g} %; the longest gap is {longest['hours']} h "
            f"from {longest['start_utc']} to {longest['end_utc']}"
        )
    if not (valid & ~calm).any():
        raise InputError(
            f"{names}: every usable hour is calm (speed < {calm_threshold_m_s:g} "
            "m/s), so no wind direction can be given to the calms"
        )
    return timeline


def _calm_directions(rows: _Rows, timeline: _Timeline) -> tuple[np.ndarray, np.ndarray]:
    """The calm rule's directions.

    A calm keeps a usable direction; one without (empty, or 0 = the station's code for calm)
    takes the direction of the last non-calm used hour before it (calms before the first
    non-calm hour take that hour's). 360 is stored as 0. Returns the direction of every row
    [deg], 0 <= d < 360 (NaN where empty and not filled), and a mask of the used calms whose
    direction was filled.
    """
    calm, valid = timeline.calm, timeline.valid
    direction = rows.direction_deg
    no_direction = calm & ~(np.isfinite(direction) & (direction != 0))  # 0 = station's calm
    direction = direction % 360.0  # 360 = north -> 0
    source = pd.Series(np.where(valid & ~calm, direction, np.nan))
    carried = source.ffill().bfill().to_numpy()
    filled = valid & no_direction
    return np.where(filled, carried, direction), filled


def _stability_index(
    rows: _Rows,
    used: np.ndarray,
    times_s: np.ndarray,
    latitude_deg: float,
    longitude_deg: float,
) -> np.ndarray:
    """The Pasquill class of each used hour, 0..5 = A..F (int).

    The given class, or Turner's method from the observed (not raised) speed, the cloud cover,
    the ceiling and the solar elevation and night flag at the site at ``times_s`` (UTC, the
    used hours' time stamps).
    """

    if rows.given_class:
        return rows.method_value[used].astype(int)
    elevation = solar_elevation_deg(times_s, latitude_deg, longitude_deg)
    night = is_night(times_s, latitude_deg, longitude_deg)
    return turner_stability_index(
        rows.speed_m_s[used],
        rows.method_value[used],
        elevation,
        night,
        ceiling_ft=rows.ceiling_ft[used],
    ).astype(int)


def _direction_step_and_spread(
    used_direction: np.ndarray, given_step: float | None, rows: _Rows
) -> tuple[float, float]:
    """The direction step of the record and the spread of each hour's plume.

    Returns the reporting step [deg] (given, or inferred from the used directions by
    :func:`direction_step_deg`) and the spread [deg] (an inferred step of 1 deg or finer is not
    spread; a given step always is); a WeatherWarning when the directions are not all
    multiples of a given step.
    """
    if given_step is None:
        step = direction_step_deg(used_direction)
        spread = step if step > _EXACT_STEP_DEG else 0.0
    else:
        step = spread = given_step
        if step > 0 and not _all_multiples(used_direction, step):
            _warn(
                f"{rows.names}: direction_step_deg = {step:g} is given, but not every "
                f"direction is a multiple of {step:g} deg; each hour is still "
                "spread over +-half the step around its direction"
            )
    return step, spread


def _summary(
    rows: _Rows,
    timeline: _Timeline,
    weather: HourlyWeather,
    filled: np.ndarray,
    *,
    step: float,
    step_given: bool,
    latitude_deg: float,
    longitude_deg: float,
    utc_offset_h: float | None,
    calm_threshold_m_s: float,
    min_wind_speed_m_s: float,
    anemometer_height_m: float,
) -> dict:
    """The summary of a record (keys: see :func:`read_hourly_record`)."""
    used, n_used, n_expected = timeline.used, timeline.n_used, timeline.n_expected
    observed = rows.speed_m_s[used]
    n_calm = int(timeline.calm[used].sum())
    light = (~timeline.calm[used]) & (observed < min_wind_speed_m_s)
    by_point = hours_by_sector(weather.direction_deg, 16, step)
    prevailing = float(np.argmax(by_point) * 22.5)
    share = np.bincount(weather.stability_index, minlength=len(STABILITY_CLASSES)) / n_used
    offsets = sorted(set().union(*(f.offsets for f in rows.files)))
    spread = weather.direction_step_deg
    return {
        "files": [f.name for f in rows.files],
        "latitude_deg": float(latitude_deg),
        "longitude_deg": float(longitude_deg),
        "first_time_utc": _utc_text(rows.time_utc[0]),
        "last_time_utc": _utc_text(rows.time_utc[-1]),
        "time_offsets": (
            f"given in the file(s): {', '.join(offsets)}"
            if offsets
            else f"utc_offset_h = {utc_offset_h:g}"
        ),
        "hours_expected": n_expected,
        "hours_used": n_used,
        "hours_missing": timeline.n_missing,
        "missing_percent": timeline.missing_percent,
        "gap_count": len(timeline.gaps),
        "gaps": timeline.gaps[:_MAX_GAPS_LISTED],
        "calm_threshold_m_s": float(calm_threshold_m_s),
        "min_wind_speed_m_s": float(min_wind_speed_m_s),
        "calm_hours": n_calm,
        "calm_percent": 100.0 * n_calm / n_used,
        "calm_direction_filled_hours": int(filled.sum()),
        "raised_to_min_speed_percent": 100.0 * int(light.sum()) / n_used,
        "mean_speed_m_s": float(weather.speed_m_s.mean()),
        "mean_observed_speed_m_s": float(observed.mean()),
        "prevailing_from_deg": prevailing,
        "prevailing_from_words": compass_words(prevailing),
        "direction_step_deg": step,
        "direction_spread_deg": spread,
        "direction_rule": _direction_rule(step, spread, step_given),
        "stability_share": {c: float(share[i]) for i, c in enumerate(STABILITY_CLASSES)},
        "stability_method": STABILITY_GIVEN if rows.given_class else STABILITY_TURNER,
        "temperature_c": _temperature_summary(weather.temperature_c),
        "years_covered": sorted({int(text[:4]) for text in rows.written[used]}),
        "record_years": round(n_expected / _HOURS_PER_MEAN_YEAR, 3),
        "anemometer_height_m": float(anemometer_height_m),
        "calm_rule": CALM_RULE,
        "missing_rule": MISSING_RULE,
    }


def _temperature_summary(temperature_c: np.ndarray) -> dict | None:
    """Min, mean, max [deg C] and hours_without of the used hours' temperatures; None if none."""
    t_used = temperature_c[np.isfinite(temperature_c)]
    if t_used.size == 0:
        return None
    return {
        "min": float(t_used.min()),
        "mean": float(t_used.mean()),
        "max": float(t_used.max()),
        "hours_without": int(temperature_c.size - t_used.size),
    }


def _warn_about_record(
    summary: dict,
    rows: _Rows,
    timeline: _Timeline,
    calm_threshold_m_s: float,
    min_wind_speed_m_s: float,
) -> None:
    """WeatherWarnings on the record as a whole, in this order: many calms, shorter than a
    year, long gaps, a speed so high it suggests the wrong unit."""
    names = rows.names
    if summary["calm_percent"] > _CALM_WARN_PERCENT:
        _warn(
            f"{names}: {summary['calm_percent']:.1f} % of the hours used are calm "
            f"(< {calm_threshold_m_s:g} m/s), more than {_CALM_WARN_PERCENT:g} %; "
            f"they were raised to {min_wind_speed_m_s:g} m/s with the direction of "
            "the last non-calm hour where they had none; check the station and "
            "its anemometer threshold"
        )
    if timeline.n_expected < HOURS_PER_YEAR:
        _warn(
            f"{names}: the record covers {timeline.n_expected} h, less than a year "
            f"({HOURS_PER_YEAR} h); seasons are not equally represented"
        )
    long_gaps = [g for g in timeline.gaps if g["hours"] > _LONG_GAP_H]
    if long_gaps:
        _warn(
            f"{names}: {len(long_gaps)} gap(s) longer than {_LONG_GAP_H} h, the "
            f"longest {long_gaps[0]['hours']} h from {long_gaps[0]['start_utc']}; "
            "missing hours are not filled, so that part of the year counts less"
        )
    observed = rows.speed_m_s[timeline.used]
    if observed.max() > _FAST_SPEED_M_S:
        i = timeline.used[int(np.argmax(observed))]
        _warn(
            f"{rows.where(i)}: speed_m_s "
            f"{observed.max():g} is above {_FAST_SPEED_M_S:g} m/s; check the unit "
            "(knots?)"
        )


def _checked_direction_step(direction_step_deg) -> float | None:
    """The given direction step as a float [deg], or None to infer it; raise outside 0..45."""
    if direction_step_deg is None:
        return None
    try:
        step = float(direction_step_deg)
    except (TypeError, ValueError):
        step = float("nan")
    if isinstance(direction_step_deg, bool) or not 0.0 <= step <= _MAX_DIRECTION_STEP_DEG:
        raise InputError(
            f"hourly weather: weather.direction_step_deg must be within "
            f"0..{_MAX_DIRECTION_STEP_DEG:g} deg (the step the directions were "
            f"reported in; 0 = exact, leave it out to infer it), "
            f"got {direction_step_deg!r}"
        )
    return step


def _all_multiples(direction_deg: np.ndarray, step_deg: float) -> bool:
    ratio = np.asarray(direction_deg, dtype=float) / step_deg
    return bool(np.allclose(ratio, np.round(ratio), atol=1e-6))


def _direction_rule(step_deg: float, spread_deg: float, given: bool) -> str:
    """The direction-step rule of a record, in words, for the summary."""
    origin = "given" if given else "inferred from the directions"
    if spread_deg > 0:
        return (
            f"each hour's plume is spread evenly over the {spread_deg:g}-degree interval "
            f"its direction was reported in (step {origin})"
        )
    if step_deg > 0:
        return (
            f"directions are reported in {step_deg:g}-degree steps ({origin}), fine enough "
            "to be used as exact: each hour's plume follows its reported direction"
        )
    why = "a step of 0 is given" if given else "the directions show no reporting step"
    return f"directions are used as exact ({why}): each hour's plume follows its reported direction"


def _check_options(
    latitude_deg,
    longitude_deg,
    anemometer_height_m,
    utc_offset_h,
    calm_threshold_m_s,
    min_wind_speed_m_s,
    max_missing_percent,
) -> None:
    checks = [
        ("latitude_deg", latitude_deg, -90.0 <= latitude_deg <= 90.0, "within -90..90"),
        ("longitude_deg", longitude_deg, -180.0 <= longitude_deg <= 180.0, "within -180..180"),
        (
            "anemometer_height_m",
            anemometer_height_m,
            0 < anemometer_height_m <= 300,
            "within (0, 300]",
        ),
        (
            "utc_offset_h",
            utc_offset_h,
            utc_offset_h is None or -14 <= utc_offset_h <= 14,
            "within -14..14",
        ),
        ("calm_threshold_m_s", calm_threshold_m_s, 0 <= calm_threshold_m_s <= 3, "within 0..3"),
        ("min_wind_speed_m_s", min_wind_speed_m_s, 0 < min_wind_speed_m_s <= 5, "within (0, 5]"),
        (
            "max_missing_percent",
            max_missing_percent,
            0 <= max_missing_percent <= 100,
            "within 0..100",
        ),
    ]
    for key, value, ok, expected in checks:
        if not ok:  # NaN fails every comparison
            raise InputError(f"hourly weather: {key} must be {expected}, got {value!r}")


# --- products of an hourly record ----------------------------------------------------------------


def _warn_uneven_sectors(weather: HourlyWeather, n_sectors: int) -> None:
    """A WeatherWarning when reported directions fall unevenly into the table's sectors."""
    step = direction_step_deg(weather.direction_deg)

    def even(n: int) -> bool:
        ratio = 360.0 / n / step
        return abs(ratio - round(ratio)) < 1e-9

    if step <= 0 or even(n_sectors):
        return
    better = [str(n) for n in (8, 12, 16, 18, 24, 36) if even(n)]
    _warn(
        f"directions are reported in {step:g} deg steps, which do not divide the "
        f"{360.0 / n_sectors:g} deg sectors evenly, so some sectors of the frequency table "
        f"hold more reported directions than others; {' or '.join(better)} sectors avoid "
        "that"
    )


def frequency_table_from_hourly(
    weather: HourlyWeather,
    n_sectors: int = 12,
    speed_edges_m_s: Sequence[float] = DEFAULT_SPEED_EDGES_M_S,
) -> pd.DataFrame:
    """Joint frequency table (sector x speed class x Pasquill class) of an hourly record.

    Parameters
    ----------
    weather : HourlyWeather
        The hours used (calms already raised to the floor speed).
    n_sectors : int
        Direction sectors, evenly spaced, centred on 0 deg (north), 4..360.
    speed_edges_m_s : sequence of float
        Lower edges of the speed classes [m s-1], starting at 0 and increasing; the last
        class is open (default 0, 1.5, 3, 5, 8, 11: six classes).

    Returns
    -------
    table : DataFrame
        Columns ``direction_deg, speed_m_s, stability, frequency, hours``, one row for every
        sector x speed class x class A-F (zero rows included), so the table is complete.
        direction_deg is the sector centre (wind FROM, clockwise from north); speed_m_s is the
        mean speed of all the hours in that speed class (one value per class, over every
        direction and stability; an empty class gets its mid-point, the open class its lower
        edge plus half the width of the class below); frequency = hours / hours used (sums to
        1); hours is the count. A direction on a sector edge goes to the clockwise sector.
        Readable by :func:`siting.readers.frequency_table.read_frequency_table`, which ignores the ``hours``
        column.

    Raises
    ------
    InputError
        If n_sectors or the speed edges are invalid, or the record has no hours.

    Warns
    -----
    WeatherWarning
        When the directions' reporting step does not divide the sectors evenly (some sectors
        then hold more reported directions than others).
    """
    if isinstance(n_sectors, bool) or int(n_sectors) != n_sectors or not 4 <= n_sectors <= 360:
        raise InputError(f"n_sectors must be a whole number 4..360, got {n_sectors!r}")
    n_sectors = int(n_sectors)
    edges = _checked_edges(speed_edges_m_s)
    if weather.n_hours == 0:
        raise InputError("frequency table: the hourly record has no hours")
    _warn_uneven_sectors(weather, n_sectors)
    width = 360.0 / n_sectors
    sector = np.floor((weather.direction_deg % 360.0) / width + 0.5).astype(int) % n_sectors
    speed_class = speed_class_index(weather.speed_m_s, edges)
    n_classes, n_stab = edges.size, len(STABILITY_CLASSES)
    flat = (sector * n_classes + speed_class) * n_stab + weather.stability_index
    hours = np.bincount(flat, minlength=n_sectors * n_classes * n_stab)
    class_hours = np.bincount(speed_class, minlength=n_classes)
    class_sum = np.bincount(speed_class, weights=weather.speed_m_s, minlength=n_classes)
    upper = np.append(edges[1:], edges[-1] + (edges[-1] - edges[-2] if edges.size > 1 else 2.0))
    fallback = (edges + upper) / 2.0
    class_speed = np.where(class_hours > 0, class_sum / np.maximum(class_hours, 1), fallback)
    k, j, s = np.meshgrid(
        np.arange(n_sectors), np.arange(n_classes), np.arange(n_stab), indexing="ij"
    )
    return pd.DataFrame(
        {
            "direction_deg": (k.ravel() * width).round(6),
            "speed_m_s": class_speed[j.ravel()],
            "stability": np.array(STABILITY_CLASSES)[s.ravel()],
            "frequency": hours / weather.n_hours,
            "hours": hours.astype(int),
        }
    )
