"""Hourly record files as read: cells, columns, times and UTC offsets, several files joined.

The first steps of :func:`siting.readers.hourly_record.read_hourly_record` (its module
docstring states the file format and the time rule):

* :func:`_read_files` -- read every file (header, rows, times checked) and join them in time
  order, refusing overlaps.
* :func:`_joined_rows` -- check every value (numbers, ranges, classes) and put the files' rows
  end to end as one :class:`_Rows`.

Also the helpers the later steps share: :class:`_Rows` (the rows of a record, in time order),
:func:`_warn` (a WeatherWarning about the record) and :func:`_utc_text`. The rules applied to
the rows (missing hours, calms, stability) are in ``hourly_rules.py``.
"""

from __future__ import annotations

import csv
import io
import warnings
from dataclasses import dataclass
from itertools import pairwise
from pathlib import Path

import numpy as np
import pandas as pd

from siting.errors import InputError, InputFileError, WeatherWarning
from siting.physics.plume import STABILITY_CLASSES

HOURLY_REQUIRED = ("time", "direction_deg", "speed_m_s")
HOURLY_OPTIONAL = ("stability", "cloud_oktas", "ceiling_ft", "temperature_c")
#: Cell texts read as "no value" in an hourly record (compared case-insensitively).
MISSING_MARKERS = frozenset({"", "na", "nan", "n/a"})
_TEMPERATURE_RANGE_C = (-80.0, 60.0)  # outside: surely not deg C (kelvin, deg F?)
_TIME_RE = (
    r"^(?P<date>\d{4}-\d{2}-\d{2})[T ](?P<hour>\d{2}):(?P<minute>\d{2})"
    r"(?::(?P<second>\d{2}(?:\.\d+)?))?"
    r"(?P<offset>Z|[+-]\d{2}(?::?\d{2})?)?$"
)


class _RawFile:
    """One hourly file as read: its columns by name, row numbers, UTC times.

    Siting's own CSV holds stripped cell texts; the other formats' readers
    (``weather_formats.py``) give float columns already in siting's units (NaN where missing),
    the time as ``time`` texts, and ``labels`` naming each column as the source does, so a
    message points at the source's own column. ``row_word`` is what a row number counts
    ("line" in a text file, "time step" in a NetCDF file); ``source`` describes the format
    and what its missing codes and quality flags removed (for the summary).
    """

    def __init__(
        self,
        name: str,
        columns: dict[str, np.ndarray],
        lines: np.ndarray,
        time_utc: np.ndarray,
        offsets: set[str],
        *,
        labels: dict[str, str] | None = None,
        shown: dict[str, np.ndarray] | None = None,
        row_word: str = "line",
        source: dict | None = None,
        year: np.ndarray | None = None,
    ):
        self.name = name
        self.columns = columns
        self.lines = lines
        self.time_utc = time_utc  # datetime64[m]
        self.offsets = offsets
        self.labels = labels or {}
        self.shown = shown or {}
        self.row_word = row_word
        self.source = source or {"format": "csv", "layout": "siting's hourly CSV"}
        # each row's calendar year as the source writes it (local time where it is local)
        self.year = (
            np.array([int(t[:4]) for t in columns["time"]], dtype=int) if year is None else year
        )

    def where(self, line: int) -> str:
        """'<file>, line <n>' (or 'time step <n>')."""
        return f"{self.name}, {self.row_word} {line}"

    def label(self, column: str) -> str:
        """The column as the source names it (siting's own name where it is the same)."""
        return self.labels.get(column, column)

    def shown_value(self, column: str, i: int) -> str:
        """Row i's value of a column as the source wrote it, for a message."""
        values = self.shown.get(column, self.columns[column])
        value = values[i]
        return repr(value) if isinstance(value, str) else f"{value:g}"


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
    year: np.ndarray  # the row's calendar year as the source writes it

    @property
    def names(self) -> str:
        """The file names, comma-separated, for messages."""
        return ", ".join(f.name for f in self.files)

    def where(self, i: int) -> str:
        """'<file>, line <n>' of row i ('time step <n>' in a NetCDF file)."""
        return self.files[self.file_of[i]].where(self.line[i])


def _where(name: str, line: int) -> str:
    return f"{name}, line {line}"


def _utc_text(t) -> str:
    return str(np.datetime64(t, "m")) + "Z"


def _warn(message: str, parameters: tuple[str, ...] = ()) -> None:
    """Issue a WeatherWarning about the record (shown at the reader's caller's call)."""
    warnings.warn(WeatherWarning(message, parameters=parameters), stacklevel=3)


# --- one file: header, rows, times ------------------------------------------------------------


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


def _read_hourly_file(
    path: Path, utc_offset_h: float | None, data: bytes | None = None
) -> _RawFile:
    """Read one hourly CSV (from ``data``, its bytes, when given), parse its times and check
    they increase; a WeatherWarning for ignored columns, an unused utc_offset_h and an unused
    ceiling_ft."""
    name = path.name
    header, rows, lines, header_line, ignored = _read_rows(path, data)
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
    raw = _RawFile(name, columns, line_numbers, time_utc, offsets)
    _check_increasing(raw)  # the same order rule as every other format's
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
    return raw


def _read_rows(
    path: Path, data: bytes | None = None
) -> tuple[list[str], list[list[str]], list[int], int, list[str]]:
    """Header, data rows (stripped cells), their 1-based line numbers, the header's line and
    the ignored columns; skips blank and # lines. The header is checked before any row."""
    name = path.name
    if data is None:
        if not path.is_file():
            raise InputFileError(f"{path}: hourly weather file not found")
        data = path.read_bytes()
    header, header_line, rows, lines, ignored = None, 0, [], [], []
    try:
        handle = io.StringIO(data.decode("utf-8-sig"), newline="")
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
            f"(got {','.join(header)}); a CSV in another layout is read with a column map "
            "(columns: time=...,direction=...,speed=...,cloud=...; in a scenario "
            "[weather] columns)",
            parameters=("columns",),
        )
    if has_class and has_cloud:
        raise InputError(
            f"{_where(name, header_line)}: give either a stability column or a "
            "cloud_oktas column, not both (which one should set the class?)"
        )
    return [c for c in header if c not in HOURLY_REQUIRED + HOURLY_OPTIONAL]


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


def _offset_minutes(text: str) -> int:
    """'Z', '+01:00', '-0530', '+02' -> minutes east of UTC."""
    if text == "Z":
        return 0
    sign = -1 if text[0] == "-" else 1
    digits = text[1:].replace(":", "")
    return sign * (int(digits[:2]) * 60 + (int(digits[2:]) if len(digits) > 2 else 0))


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
                f"{after.where(after.lines[0])}: time "
                f"{after.columns['time'][0]!r} overlaps {before.name}, which runs "
                f"to {before.columns['time'][-1]!r} ({before.row_word} {before.lines[-1]}); "
                "hourly files must not overlap"
            )
    return files


# --- the values: numbers, ranges, classes -----------------------------------------------------


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
        year=np.concatenate([f.year for f in files]),
    )


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


def _is_missing(texts: np.ndarray) -> np.ndarray:
    """True where a cell holds no value (empty, NA, NaN, n/a)."""
    if texts.size == 0:
        return np.zeros(0, dtype=bool)
    return pd.Series(texts, dtype=object).str.lower().isin(MISSING_MARKERS).to_numpy()


def _numbers(raw: _RawFile, column: str) -> np.ndarray:
    """A column as floats, NaN where empty; anything else that is not a finite number fails."""
    texts = raw.columns[column]
    if texts.dtype.kind == "f":  # a reader of another format: numbers in siting's units
        # +inf is an unlimited ceiling (no cloud base); any other infinity is a fault
        bad = np.isinf(texts) & ~((column == "ceiling_ft") & (texts > 0))
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise InputError(
                f"{raw.where(raw.lines[i])}: {raw.label(column)} must be a finite number, "
                f"got {raw.shown_value(column, i)}"
            )
        return texts
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
            f"{raw.where(raw.lines[i])}: {raw.label(column)} must be {expected}, "
            f"got {raw.shown_value(column, i)}"
        )


# --- the files of the other formats (weather_isd.py, weather_netcdf.py, weather_mapped.py) ---


def _numeric_file(
    name: str,
    time_utc: np.ndarray,
    values: dict[str, np.ndarray],
    rows: np.ndarray,
    *,
    labels: dict[str, str],
    source: dict,
    row_word: str = "line",
    written: np.ndarray | None = None,
    year: np.ndarray | None = None,
    offsets: set[str] | None = None,
) -> _RawFile:
    """A file read by another format's reader, as the rows ``hourly_record`` checks.

    ``values`` holds float columns in siting's units (direction_deg, speed_m_s, cloud_oktas,
    and optional ceiling_ft, temperature_c); NaN where missing. ``written`` is each row's time
    as the source writes it (default: the UTC time, ``2025-01-01T00:00Z``); ``year`` its
    calendar year (default: the UTC year); ``offsets`` the UTC offsets the times carry
    (default: UTC, the format's own time scale; an empty set for naive local times).
    """
    time_utc = np.asarray(time_utc, dtype="datetime64[m]")
    if written is None:
        written = np.array([str(t) + "Z" for t in time_utc], dtype=object)
    if year is None:
        year = time_utc.astype("datetime64[Y]").astype(int) + 1970
    columns = {"time": written, **values}
    return _RawFile(
        name,
        columns,
        np.asarray(rows, dtype=int),
        time_utc,
        {"UTC"} if offsets is None else offsets,
        labels=labels,
        row_word=row_word,
        source=source,
        year=np.asarray(year, dtype=int),
    )


def _check_increasing(raw: _RawFile) -> None:
    """Raise where a file's times repeat or go back (rows must be in increasing time order)."""
    step = np.diff(raw.time_utc).astype(np.int64)
    if (step <= 0).any():
        i = int(np.flatnonzero(step <= 0)[0]) + 1
        what = "repeats the time of" if step[i - 1] == 0 else "is earlier than"
        raise InputError(
            f"{raw.where(raw.lines[i])}: time {raw.columns['time'][i]!r} {what} "
            f"{raw.row_word} {raw.lines[i - 1]} ({raw.columns['time'][i - 1]!r}); rows must "
            "be in increasing time order without duplicates"
        )
