"""Which reader reads an hourly weather file: the formats, their options and their detection.

An hourly record may come in three formats, each read into the same rows
(:class:`~siting.readers.hourly_columns._RawFile`) that the rules of ``hourly_record.py`` then
check and turn into hours, so a record is treated the same whatever it came in:

* ``csv`` -- siting's own hourly CSV (``hourly_record.py`` states its layout), or any CSV by a
  column map and its units (``weather_mapped.py``: a national service's export, say);
* ``isd-lite`` -- the open global station archive's hourly "lite" text files, one per
  station-year, fixed-width scaled integers (``weather_isd.py``);
* ``netcdf`` -- CF NetCDF from a reanalysis: 10 m wind components, total cloud cover, cloud
  base height and 2 m temperature on a grid, read with xarray at the site's grid cell
  (``weather_netcdf.py``).

The format is named (the command line's format option, ``[weather] format``) or detected from the content
(:func:`detect_format`): NetCDF by its file signature, an ISD-Lite file by its first data line
(four date fields and eight signed integers in the documented columns), siting's CSV by its
header, any other CSV only with a column map. A file is never guessed at: content that fits
none of these is refused, saying what each format needs. Gzip-compressed files (``.gz``, as
the station archive serves them) are read through.

All files of one record must be of one format (the summary states it once).
"""

from __future__ import annotations

import gzip
import re
from dataclasses import dataclass, field
from pathlib import Path

from siting.errors import InputError, InputFileError
from siting.readers.hourly_columns import _join_files, _RawFile, _read_hourly_file
from siting.readers.weather_isd import read_isd_lite_file
from siting.readers.weather_mapped import read_mapped_csv
from siting.readers.weather_netcdf import read_netcdf_file

FORMATS = ("csv", "isd-lite", "netcdf")
#: Column-map keys of a CSV (each names one source column; time may be "DATE+HOUR").
CSV_KEYS = ("time", "direction", "speed", "cloud", "ceiling", "temperature", "stability")
#: Column-map keys of a NetCDF file (each names one variable).
NETCDF_KEYS = ("u", "v", "cloud", "ceiling", "temperature")
CLOUD_UNITS = ("oktas", "fraction", "percent")
CEILING_UNITS = ("ft", "m")
GRID_POINTS = ("nearest", "bilinear")
_NETCDF_SIGNATURES = (b"CDF\x01", b"CDF\x02", b"CDF\x05", b"\x89HDF\r\n\x1a\n")
_GZIP_SIGNATURE = b"\x1f\x8b"
# an ISD-Lite data line: year, month, day, hour, then eight right-justified 6-wide integers
_ISD_LINE = re.compile(r"^\d{4} [ \d]\d [ \d]\d [ \d]\d(?:[ \d-]{5}\d){8}\s*$")


@dataclass(frozen=True)
class WeatherSource:
    """How to read a record's files: the format and, for a CSV or NetCDF file, its map.

    Attributes
    ----------
    format : {"auto", "csv", "isd-lite", "netcdf"}
        "auto" detects it from each file's content (:func:`detect_format`).
    columns : dict of str to str
        Column map: siting's name -> the source's name. A CSV: time (or "DATE+HOUR", two
        columns joined by a space before parsing), direction, speed, and cloud or stability;
        optional ceiling, temperature, and a quality-flag column for any of them as
        ``<name>_flag``. A NetCDF file: u, v, cloud, ceiling, temperature (variable names;
        without a map they are found by CF standard name or the usual short names).
    speed_unit : {"m/s", "knots", "km/h"}
        Unit of the CSV's speed column.
    direction_unit : {"deg", "tens"}
        Unit of the CSV's direction column (tens of degrees: 27 = 270 deg).
    cloud_unit : {"oktas", "fraction", "percent"}
        Unit of the CSV's cloud column (a fraction or percent becomes oktas by WMO's scale).
    ceiling_unit : {"ft", "m"}
        Unit of the CSV's ceiling column.
    time_format : str, optional
        The CSV's time format, as Python's strptime writes it (``%d.%m.%Y %H:%M``); None
        reads ISO 8601.
    missing_codes : tuple of str
        Cell values that mean "missing" in the CSV (``-999``, ``9999``), besides empty cells.
    flags_ok : tuple of str
        Quality-flag values that accept a value; a value with any other flag is missing.
    grid_point : {"nearest", "bilinear"}
        A NetCDF grid's value at the site: the nearest grid point, or bilinear interpolation
        between the four around it.
    """

    format: str = "auto"
    columns: dict[str, str] = field(default_factory=dict)
    speed_unit: str = "m/s"
    direction_unit: str = "deg"
    cloud_unit: str = "oktas"
    ceiling_unit: str = "ft"
    time_format: str | None = None
    missing_codes: tuple[str, ...] = ()
    flags_ok: tuple[str, ...] = ()
    grid_point: str = "nearest"

    @property
    def mapped(self) -> bool:
        """True when a column map is given (a CSV that is not siting's own layout)."""
        return bool(self.columns)


def parse_column_map(text: str | None) -> dict[str, str]:
    """``time=DATE,direction=DD,speed=FF`` -> {"time": "DATE", ...}; None or "" -> {}.

    Parameters
    ----------
    text : str, optional
        The map as NAME=COLUMN pairs, comma-separated.

    Returns
    -------
    dict of str to str
        siting's name -> the source's column or variable.

    Raises
    ------
    InputError
        A pair without "=", an empty name, a key given twice, or an unknown key.
    """
    if not text:
        return {}
    known = set(CSV_KEYS) | set(NETCDF_KEYS) | {f"{k}_flag" for k in CSV_KEYS}
    pairs: dict[str, str] = {}
    for part in text.split(","):
        key, sep, value = (p.strip() for p in part.partition("="))
        if not sep or not key or not value:
            raise InputError(
                f"columns: {part.strip()!r} is not NAME=COLUMN; write e.g. "
                "time=DATE,direction=DD,speed=FF"
            )
        if key in pairs:
            raise InputError(f"columns: {key} is given twice")
        if key not in known:
            raise InputError(
                f"columns: {key!r} unknown; known: {', '.join(CSV_KEYS)} (a CSV; a quality "
                f"flag as <name>_flag) or {', '.join(NETCDF_KEYS)} (NetCDF variables)"
            )
        pairs[key] = value
    return pairs


def weather_source(
    format: str = "auto",
    columns: str | dict[str, str] | None = None,
    *,
    speed_unit: str = "m/s",
    direction_unit: str = "deg",
    cloud_unit: str = "oktas",
    ceiling_unit: str = "ft",
    time_format: str | None = None,
    missing_codes: str | list[str] | tuple[str, ...] | None = None,
    flags_ok: str | list[str] | tuple[str, ...] | None = None,
    grid_point: str = "nearest",
) -> WeatherSource:
    """A checked :class:`WeatherSource` from options as the command line or a scenario gives
    them: the column map as ``time=DATE,...`` text or a table, the codes and flags as
    comma-separated text or a list.

    Parameters
    ----------
    format, columns, speed_unit, direction_unit, cloud_unit, ceiling_unit, time_format, \
missing_codes, flags_ok, grid_point
        As the attributes of :class:`WeatherSource`; ``columns`` may be its text form,
        ``missing_codes`` and ``flags_ok`` comma-separated text.

    Returns
    -------
    WeatherSource
        The options, checked.

    Raises
    ------
    InputError
        A malformed column map or an option outside its choices.
    """

    def listed(value) -> tuple[str, ...]:
        if value is None:
            return ()
        items = value.split(",") if isinstance(value, str) else list(value)
        return tuple(str(item).strip() for item in items if str(item).strip())

    mapping = (
        parse_column_map(columns)
        if isinstance(columns, str) or columns is None
        else {str(k): str(v) for k, v in columns.items()}
    )
    if not isinstance(columns, str) and columns:
        parse_column_map(",".join(f"{k}={v}" for k, v in mapping.items()))  # the same checks
    return _checked_source(
        WeatherSource(
            format=format,
            columns=mapping,
            speed_unit=speed_unit,
            direction_unit=direction_unit,
            cloud_unit=cloud_unit,
            ceiling_unit=ceiling_unit,
            time_format=time_format,
            missing_codes=listed(missing_codes),
            flags_ok=listed(flags_ok),
            grid_point=grid_point,
        )
    )


def source_of(options) -> WeatherSource:
    """A checked :class:`WeatherSource` from any object whose attributes carry its options
    under their own names: the command line's parsed arguments and a scenario's [weather]
    section alike.

    Parameters
    ----------
    options : object
        Has format, columns, speed_unit, direction_unit, cloud_unit, ceiling_unit,
        time_format, missing_codes, flags_ok and grid_point.

    Returns
    -------
    WeatherSource
        The options, checked (:func:`weather_source`).
    """
    return weather_source(
        options.format,
        options.columns,
        speed_unit=options.speed_unit,
        direction_unit=options.direction_unit,
        cloud_unit=options.cloud_unit,
        ceiling_unit=options.ceiling_unit,
        time_format=options.time_format,
        missing_codes=options.missing_codes,
        flags_ok=options.flags_ok,
        grid_point=options.grid_point,
    )


def _checked_source(source: WeatherSource | None) -> WeatherSource:
    """The source's options checked (None: detect everything, siting's units)."""
    source = source or WeatherSource()
    choices = [
        ("format", source.format, ("auto", *FORMATS)),
        ("speed_unit", source.speed_unit, ("m/s", "knots", "km/h")),
        ("direction_unit", source.direction_unit, ("deg", "tens")),
        ("cloud_unit", source.cloud_unit, CLOUD_UNITS),
        ("ceiling_unit", source.ceiling_unit, CEILING_UNITS),
        ("grid_point", source.grid_point, GRID_POINTS),
    ]
    for key, value, allowed in choices:
        if value not in allowed:
            raise InputError(
                f"hourly weather: {key} must be one of {', '.join(allowed)}, got {value!r}"
            )
    return source


def file_bytes(path: Path, head: bool = False) -> bytes:
    """A file's bytes, gunzipped when it is gzip-compressed.

    Parameters
    ----------
    path : Path
        The file.
    head : bool
        Only its first 16 bytes, as they are (its signature).

    Returns
    -------
    bytes
        Its content (decompressed).

    Raises
    ------
    InputFileError
        The file does not exist.
    InputError
        A gzip file that cannot be decompressed.
    """
    if head:
        return _head(path)
    if not path.is_file():
        raise InputFileError(f"{path}: hourly weather file not found")
    data = path.read_bytes()
    if data[:2] == _GZIP_SIGNATURE:
        try:
            return gzip.decompress(data)
        except (OSError, EOFError) as exc:
            raise InputError(f"{path.name}: a gzip file that cannot be read: {exc}") from None
    return data


def _head(path: Path) -> bytes:
    """A file's first bytes (its signature); InputFileError when it does not exist."""
    if not path.is_file():
        raise InputFileError(f"{path}: hourly weather file not found")
    with open(path, "rb") as handle:
        return handle.read(16)


def detect_format(path: Path, data: bytes | None = None) -> str:
    """The format of a weather file from its content: "netcdf", "isd-lite" or "csv".

    NetCDF by its signature (classic ``CDF``, or HDF5 for NetCDF-4); ISD-Lite when its first
    non-blank line is a data line of that format; otherwise "csv" (whether it is siting's own
    layout or needs a column map is decided when it is read).

    Parameters
    ----------
    path : Path
        The file.
    data : bytes, optional
        Its content (read from ``path`` when not given).

    Returns
    -------
    str
        "netcdf", "isd-lite" or "csv".
    """
    data = file_bytes(path) if data is None else data
    if data.startswith(_NETCDF_SIGNATURES):
        return "netcdf"
    head = data[:4096].decode("latin-1").splitlines()
    first = next((line for line in head if line.strip()), "")
    if _ISD_LINE.match(first):
        return "isd-lite"
    return "csv"


def read_record_files(
    paths,
    source: WeatherSource | None,
    utc_offset_h: float | None,
    latitude_deg: float,
    longitude_deg: float,
) -> list[_RawFile]:
    """Read every file of a record by its format and join them in time order.

    Parameters
    ----------
    paths : path or sequence of paths
        The record's files.
    source : WeatherSource, optional
        Their format and its options (None: detected, siting's own CSV layout).
    utc_offset_h : float, optional
        Offset of naive times from UTC [h].
    latitude_deg, longitude_deg : float
        The site [deg] (a NetCDF grid's point).

    Returns
    -------
    list of _RawFile
        The files in time order (overlaps refused; ``hourly_columns._join_files``).

    Raises
    ------
    InputFileError
        A file does not exist.
    InputError
        No file, files of different formats, a named format the content contradicts, or any
        fault of a file (named by the reader).
    """
    source = _checked_source(source)
    paths = [Path(paths)] if isinstance(paths, (str, Path)) else [Path(p) for p in paths]
    if not paths:
        raise InputError("hourly weather: no file given")
    files, formats = [], {}
    for path in paths:
        head = _head(path)
        # a NetCDF file is opened where it lies (xarray reads the site's point only: a
        # reanalysis file may be larger than memory); anything else is read whole
        data = None if head.startswith(_NETCDF_SIGNATURES) else file_bytes(path)
        found = "netcdf" if data is None else detect_format(path, data)
        kind = found if source.format == "auto" else source.format
        if source.format != "auto" and found == "netcdf" and kind != "netcdf":
            raise InputError(f"{path.name}: a NetCDF file, but the format given is {kind}")
        if kind == "netcdf" and found != "netcdf":
            raise InputError(
                f"{path.name}: format netcdf given, but the file has no NetCDF signature "
                "(classic CDF or NetCDF-4/HDF5)"
            )
        formats[path.name] = kind
        if kind == "netcdf":
            raw = read_netcdf_file(path, data, latitude_deg, longitude_deg, source)
        elif kind == "isd-lite":
            raw = read_isd_lite_file(path, data)
        elif source.mapped:
            raw = read_mapped_csv(path, data, source, utc_offset_h)
        else:
            raw = _read_hourly_file(path, utc_offset_h, data)
        files.append(raw)
    if len(set(formats.values())) > 1:
        listed = ", ".join(f"{name} ({kind})" for name, kind in formats.items())
        raise InputError(
            f"hourly weather: the files are of different formats: {listed}; a record is "
            "read from files of one format"
        )
    return _join_files(files)
