"""Any hourly CSV by a column map and its units (a national weather service's export, say).

The map names the source's column for each of siting's quantities (``time``, ``direction``,
``speed``, ``cloud`` or ``stability``; optional ``ceiling``, ``temperature``) and, for any of
them, a quality-flag column (``speed_flag = "Q_FF"``). The units are given once for the file:
speed in m/s, knots or km/h; direction in degrees or tens of degrees; cloud in oktas, as a
fraction or in percent (a fraction or percent becomes oktas by WMO's okta scale); ceiling in
ft or m; temperature in deg C. Each value becomes siting's unit by the unit's exact definition
(``physics/met_units.py``), and the rules after reading are those of siting's own CSV
(``hourly_record.py``).

* Layout: lines starting with ``#`` and blank lines before the header are skipped; the
  separator is the one of ``,``, ``;``, tab and ``|`` under which the header holds every
  mapped column. With a separator other than ``,``, a decimal comma (``3,5``) is read as a
  decimal point. Text is UTF-8, or Latin-1 where it is not UTF-8 (the summary says which).
* Time: the ``time`` column, or two joined (``time = "DATE+HOUR"``: the cells joined by a
  space), in ``time_format`` (strptime, e.g. ``%d.%m.%Y %H:%M``; a ``%z`` in it reads the
  offset from the text) or ISO 8601 without one. Naive times need ``utc_offset_h``. Times must
  be on the whole hour; they are never rounded.
* Missing: empty cells, NA, NaN, the given ``missing_codes`` (compared as text and as
  numbers: ``-999`` also matches ``-999.0``), and values whose flag is not one of
  ``flags_ok``; each is counted per quantity in the summary.
"""

from __future__ import annotations

import csv
import io
from datetime import UTC, datetime
from pathlib import Path

import numpy as np

from siting.errors import InputError
from siting.physics.met_units import (
    direction_in_deg,
    feet_from_metres,
    oktas_from_fraction,
    speed_in_m_s,
)
from siting.readers.hourly_columns import (
    MISSING_MARKERS,
    _check_increasing,
    _numeric_file,
    _parse_times,
)

_SEPARATORS = (",", ";", "\t", "|")
#: siting's column and the map key of each quantity read as a number.
_NUMBER_COLUMNS = {
    "direction": "direction_deg",
    "speed": "speed_m_s",
    "cloud": "cloud_oktas",
    "ceiling": "ceiling_ft",
    "temperature": "temperature_c",
}


def read_mapped_csv(path: Path, data: bytes, source, utc_offset_h: float | None):
    """Read one CSV by the source's column map and units.

    Parameters
    ----------
    path : Path
        The file (its name is used in messages).
    data : bytes
        Its content (gunzipped).
    source : WeatherSource
        The column map, the units, the time format, missing codes and accepted flags.
    utc_offset_h : float, optional
        Offset of naive times from UTC [h].

    Returns
    -------
    _RawFile
        siting's columns in siting's units, times in UTC; the source description lists the
        values counted missing per quantity (missing codes, flags).

    Raises
    ------
    InputError
        A map without time, direction, speed, or with both or neither of cloud and
        stability; a mapped column not in the header; a cell that is not a number; a time not
        in the format; naive times without utc_offset_h.
    """
    name = path.name
    columns = dict(source.columns)
    _check_map(name, columns)
    if any(key.endswith("_flag") for key in columns) and not source.flags_ok:
        raise InputError(
            f"{name}: the column map names quality-flag columns but no flag is accepted; "
            "give flags_ok, the flag values that accept a value (e.g. 0,1)",
            parameters=("flags_ok",),
        )
    text, encoding = _decoded(data)
    header, rows, lines, separator = _table(name, text, columns)
    index = {c: k for k, c in enumerate(header)}
    cells = np.array(rows, dtype=object).reshape(len(rows), len(header))
    line_numbers = np.asarray(lines, dtype=int)

    def column(source_name: str) -> np.ndarray:
        return cells[:, index[source_name]]

    time_text = _time_texts(columns["time"], column)
    time_utc, offsets, year = _times(name, time_text, line_numbers, source, utc_offset_h)
    values, shown, labels, counts = {}, {}, {}, {}
    decimal_comma = separator != ","
    for key, siting_name in _NUMBER_COLUMNS.items():
        if key not in columns:
            continue
        texts = column(columns[key])
        missing, n_codes = _missing(texts, source.missing_codes)
        missing_flag, n_flags = _flagged(
            texts, column(columns[f"{key}_flag"]) if f"{key}_flag" in columns else None, source
        )
        number = _numbers(name, columns[key], texts, missing, line_numbers, decimal_comma)
        number = np.where(missing_flag, np.nan, number)
        values[siting_name] = _in_siting_units(key, number, source)
        shown[siting_name] = texts
        labels[siting_name] = f"{columns[key]} ({_unit_words(key, source)})"
        counts[key] = {"missing codes or empty": n_codes, "flag not accepted": n_flags}
    if "stability" in columns:
        texts = column(columns["stability"])
        missing, n_codes = _missing(texts, source.missing_codes)
        values["stability"] = np.where(missing, "", texts).astype(object)
        labels["stability"] = f"{columns['stability']} (Pasquill class)"
        counts["stability"] = {"missing codes or empty": n_codes, "flag not accepted": 0}
    raw = _numeric_file(
        name,
        time_utc,
        values,
        line_numbers,
        labels=labels,
        source={
            "format": "csv",
            "layout": f"CSV by a column map ({_separator_words(separator)}, {encoding})",
            "columns": columns,
            "units": {
                "speed": source.speed_unit,
                "direction": source.direction_unit,
                **({"cloud": source.cloud_unit} if "cloud" in columns else {}),
                **({"ceiling": source.ceiling_unit} if "ceiling" in columns else {}),
            },
            "time_format": source.time_format or "ISO 8601",
            "missing_codes": {k: v["missing codes or empty"] for k, v in counts.items()},
            "flags_rejected": {k: v["flag not accepted"] for k, v in counts.items()},
            "flags_ok": list(source.flags_ok),
        },
        written=time_text,
        year=year,
        offsets=offsets,
    )
    raw.shown = shown
    _check_increasing(raw)
    return raw


def _check_map(name: str, columns: dict[str, str]) -> None:
    """time, direction and speed are needed, and exactly one of cloud and stability."""
    needed = [k for k in ("time", "direction", "speed") if k not in columns]
    if needed:
        raise InputError(
            f"{name}: the column map (columns) has no {', '.join(needed)}; a CSV needs "
            "time=...,direction=...,speed=... and cloud=... or stability=...",
            parameters=("columns",),
        )
    if ("cloud" in columns) == ("stability" in columns):
        raise InputError(
            f"{name}: the column map (columns) needs exactly one of cloud (Turner's method sets the "
            "class) and stability (the class given)",
            parameters=("columns",),
        )
    for key in [k for k in columns if k.endswith("_flag")]:
        if key[: -len("_flag")] not in columns:
            raise InputError(
                f"{name}: the column map (columns) has {key} but no {key[: -len('_flag')]}",
                parameters=("columns",),
            )
    for key in ("u", "v"):
        if key in columns:
            raise InputError(
                f"{name}: {key} is a NetCDF variable; a CSV maps direction and speed",
                parameters=("columns",),
            )


def _decoded(data: bytes) -> tuple[str, str]:
    try:
        return data.decode("utf-8-sig"), "UTF-8"
    except UnicodeDecodeError:
        return data.decode("latin-1"), "Latin-1 (not UTF-8)"


def _table(name: str, text: str, columns: dict[str, str]):
    """Header, rows, their line numbers and the separator under which every mapped column is
    in the header."""
    wanted = {part for key, value in columns.items() for part in _source_columns(key, value)}
    lines = text.splitlines()
    first = next((k for k, line in enumerate(lines) if line.strip() and line[0] != "#"), None)
    if first is None:
        raise InputError(f"{name}: the file is empty (no header line)")
    best = None
    for separator in _SEPARATORS:
        header = [c.strip() for c in next(csv.reader([lines[first]], delimiter=separator))]
        if wanted <= set(header):
            best = (separator, header)
            break
    if best is None:
        header = lines[first].strip()
        missing = sorted(wanted - set(header.replace(";", ",").replace("\t", ",").split(",")))
        raise InputError(
            f"{name}, line {first + 1}: the header has no column(s) {', '.join(missing)} of "
            f"the column map (header: {header[:200]!r})",
            parameters=("columns",),
        )
    separator, header = best
    duplicated = sorted({c for c in header if header.count(c) > 1 and c in wanted})
    if duplicated:
        raise InputError(f"{name}: column(s) {', '.join(duplicated)} appear more than once")
    reader = csv.reader(io.StringIO("\n".join(lines[first + 1 :])), delimiter=separator)
    rows, numbers = [], []
    for cells in reader:
        line = first + 1 + reader.line_num
        cells = [c.strip() for c in cells]
        if not any(cells) or cells[0].startswith("#"):
            continue
        if len(cells) != len(header):
            raise InputError(
                f"{name}, line {line}: {len(cells)} values, but the header (line {first + 1}) "
                f"has {len(header)} columns"
            )
        rows.append(cells)
        numbers.append(line)
    if not rows:
        raise InputError(f"{name}: no data rows after the header (line {first + 1})")
    return header, rows, numbers, separator


def _source_columns(key: str, value: str) -> list[str]:
    return [part.strip() for part in value.split("+")] if key == "time" else [value]


def _time_texts(spec: str, column) -> np.ndarray:
    parts = [column(part.strip()) for part in spec.split("+")]
    joined = parts[0].astype(str)
    for part in parts[1:]:
        joined = np.char.add(np.char.add(joined, " "), part.astype(str))
    return np.asarray(joined, dtype=object)


def _times(name, texts, lines, source, utc_offset_h):
    """UTC times (datetime64[m]), the offsets written (empty if naive), local years."""
    empty = np.array([t.strip() == "" for t in texts])
    if empty.any():
        i = int(np.flatnonzero(empty)[0])
        raise InputError(f"{name}, line {lines[i]}: time is empty; every row needs its time")
    if source.time_format is None:
        time_utc, offsets = _parse_times(name, texts, lines, utc_offset_h)
        year = np.array([int(str(t)[:4]) for t in texts], dtype=int)
        return time_utc, offsets, year
    parsed = []
    for i, text in enumerate(texts):
        try:
            parsed.append(datetime.strptime(text.strip(), source.time_format))
        except ValueError:
            raise InputError(
                f"{name}, line {lines[i]}: time {text!r} does not match the time format "
                f"{source.time_format!r}",
                parameters=("time_format",),
            ) from None
    year = np.array([t.year for t in parsed], dtype=int)
    off_hour = [t.minute != 0 or t.second != 0 or t.microsecond != 0 for t in parsed]
    if any(off_hour):
        i = off_hour.index(True)
        raise InputError(
            f"{name}, line {lines[i]}: time {texts[i]!r} is not on a whole hour; hourly "
            "records must have minutes :00 (times are not rounded)"
        )
    aware = [t.tzinfo is not None for t in parsed]
    if any(aware) and not all(aware):
        raise InputError(f"{name}: some times carry a UTC offset and some do not")
    if all(aware):
        utc = [t.astimezone(UTC).replace(tzinfo=None) for t in parsed]
        offsets = {t.strftime("%z") for t in parsed}
        return np.array(utc, dtype="datetime64[m]"), offsets, year
    if utc_offset_h is None:
        raise InputError(
            f"{name}, line {lines[0]}: time {texts[0]!r} has no UTC offset; give "
            "utc_offset_h, the offset of the file's clock from UTC in hours (in a scenario: "
            "[weather] utc_offset_h), or a time_format with %z",
            parameters=("utc_offset_h",),
        )
    local = np.array(parsed, dtype="datetime64[m]")
    return local - np.timedelta64(round(utc_offset_h * 60), "m"), set(), year


def _missing(texts: np.ndarray, codes) -> tuple[np.ndarray, int]:
    """Cells that are empty, a missing marker or one of the missing codes (as text or as a
    number), and how many."""
    lowered = np.array([t.lower() for t in texts], dtype=object)
    missing = np.isin(lowered, list(MISSING_MARKERS))
    if codes:
        code_numbers = {_as_number(c) for c in codes} - {None}
        texts_set = set(codes)
        missing |= np.array(
            [t in texts_set or (_as_number(t) in code_numbers) for t in texts], dtype=bool
        )
    return missing, int(missing.sum())


def _flagged(texts, flags, source) -> tuple[np.ndarray, int]:
    """Values whose flag is not accepted (only where a value is there), and how many."""
    if flags is None:
        return np.zeros(texts.shape, dtype=bool), 0
    ok = set(source.flags_ok)
    rejected = np.array([f not in ok for f in flags], dtype=bool) & np.array(
        [t.strip() != "" for t in texts], dtype=bool
    )
    return rejected, int(rejected.sum())


def _as_number(text: str):
    try:
        return float(text.replace(",", "."))
    except ValueError:
        return None


def _numbers(name, column_name, texts, missing, lines, decimal_comma) -> np.ndarray:
    out = np.full(texts.shape, np.nan)
    for i, text in enumerate(texts):
        if missing[i]:
            continue
        cell = text.replace(",", ".") if decimal_comma else text
        try:
            value = float(cell)
        except ValueError:
            value = np.nan
        if not np.isfinite(value):
            raise InputError(
                f"{name}, line {lines[i]}: {column_name} must be a number, got {text!r} "
                "(a missing-value code? give it in missing_codes)",
                parameters=("missing_codes",),
            )
        out[i] = value
    return out


def _in_siting_units(key: str, values: np.ndarray, source) -> np.ndarray:
    if key == "speed":
        return speed_in_m_s(values, source.speed_unit)
    if key == "direction":
        return direction_in_deg(values, source.direction_unit)
    if key == "cloud":
        if source.cloud_unit == "oktas":
            return values
        fraction = values / 100.0 if source.cloud_unit == "percent" else values
        # out-of-range fractions stay out of range (checked with the other values)
        outside = (fraction < 0) | (fraction > 1)  # False where NaN (missing stays missing)
        return np.where(outside, 99.0, oktas_from_fraction(np.clip(fraction, 0, 1)))
    if key == "ceiling":
        return values if source.ceiling_unit == "ft" else feet_from_metres(values)
    return values


def _unit_words(key: str, source) -> str:
    return {
        "speed": source.speed_unit,
        "direction": "tens of degrees" if source.direction_unit == "tens" else "degrees",
        "cloud": source.cloud_unit,
        "ceiling": source.ceiling_unit,
        "temperature": "deg C",
    }[key]


def _separator_words(separator: str) -> str:
    return {",": "comma", ";": "semicolon", "\t": "tab", "|": "bar"}[separator] + "-separated"
