"""Hourly weather records: station or reanalysis files -> :class:`HourlyWeather` and a summary.

The files may be siting's own CSV (below), any CSV by a column map, ISD-Lite station-year
files or reanalysis CF NetCDF: ``weather_formats.py`` reads each into the same rows, and
every rule below applies to them all alike.

An adapter: reads, checks and converts; the physics is elsewhere (solar position in
``solar.py``, Turner's stability classes in ``stability.py``, the hour-by-hour plume in
``hourly.py``). :func:`read_hourly_record` is a short sequence of named steps, spread over
four modules:

* ``hourly_columns.py`` -- the files as read: cells, columns, times, several files joined.
* ``hourly_rules.py`` -- the timeline, the missing-hour and calm rules, stability, the
  direction step.
* ``hourly_table.py`` -- naming, binning and classing of directions and speeds (shared with
  the weather charts) and the frequency table made from the hours.
* this module -- the options, the hours used, the summary and the warnings on the record.

What is not here: reading a frequency table (``frequency_table.py``), drawing the charts
(``presentation/weather_figures.py``), and writing the files of ``siting weather``
(``output/weather.py``): a reader writes nothing.

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

from dataclasses import dataclass

import numpy as np

from siting.dispersion.hourly import HourlyWeather
from siting.errors import InputError
from siting.physics.plume import STABILITY_CLASSES
from siting.readers.hourly_columns import _joined_rows, _Rows, _utc_text, _warn
from siting.readers.hourly_rules import (
    CALM_RULE,
    MISSING_RULE,
    STABILITY_GIVEN,
    STABILITY_TURNER,
    _calm_directions,
    _checked_direction_step,
    _direction_rule,
    _direction_step_and_spread,
    _hour_index,
    _stability_index,
    _Timeline,
    _usable_hours,
)
from siting.readers.hourly_table import compass_words, hours_by_sector
from siting.readers.weather_formats import WeatherSource, read_record_files

HOURS_PER_YEAR = 8760  # 365 d x 24 h: a common (non-leap) year
_HOURS_PER_MEAN_YEAR = 8766.0  # 365.25 d x 24 h, for the record length in years
_CALM_WARN_PERCENT = 10.0  # our choice: more calms than this deserve a look at the station
_LONG_GAP_H = 24  # our choice: a gap longer than a day may hide a season's pattern
_MAX_GAPS_LISTED = 20
_FAST_SPEED_M_S = 50.0  # hourly means above this suggest knots or gusts (our choice)
#: A record's station or grid point farther than this from the site [km] is warned about
#: (common practice, no source; ``siting verify`` rates 30-60 km medium, beyond high).
STATION_WARN_KM = 30.0


@dataclass(frozen=True)
class _Options:
    """The options of :func:`read_hourly_record` as given, checked; ``given_step_deg`` is the
    direction step as a float [deg], None to infer it."""

    latitude_deg: float
    longitude_deg: float
    anemometer_height_m: float
    utc_offset_h: float | None
    calm_threshold_m_s: float
    min_wind_speed_m_s: float
    max_missing_percent: float
    given_step_deg: float | None


def read_hourly_record(
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
    source: WeatherSource | None = None,
    temperature_required: bool = False,
    station_latitude_deg: float | None = None,
    station_longitude_deg: float | None = None,
) -> tuple[HourlyWeather, dict]:
    """Read, check and prepare an hourly weather record (one or several files).

    Parameters
    ----------
    paths : path or sequence of paths
        One file, or several (e.g. one per year), joined in time order: siting's hourly CSV,
        any CSV by a column map, ISD-Lite station-year files or reanalysis NetCDF
        (``weather_formats.py``). Time rule, calm rule and missing-hour rule: see the module
        docstring.
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
    source : WeatherSource, optional
        The files' format and, for a CSV by a column map or a NetCDF file, the map, units and
        grid point rule; None detects the format and reads siting's own CSV layout.
    temperature_required : bool
        Every hour used needs its air temperature (hour-by-hour emission follows it): an
        hour without one is a missing hour, counted and left out like any other.
    station_latitude_deg, station_longitude_deg : float, optional
        The station's position [deg], for its distance from the site (a NetCDF record's
        position is its grid point's, and these are then not used).

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
        anemometer_height_m, calm_rule, missing_rule, format (csv, isd-lite or netcdf),
        sources (each file's layout and the values its missing codes and quality flags
        removed), grid_point (a NetCDF record: the grid point's position, the rule and its
        distance from the site [km]; else None), record_position (the record's position: where it
        comes from, latitude_deg, longitude_deg, distance_km from the site, or None where
        not known; the rule of the warning), by_year (per calendar year as the source writes
        it: hours used, rows in the files, calm %, mean speed, prevailing direction),
        temperature_required (an hour without its temperature counted missing).

    Warns
    -----
    WeatherWarning
        Legal but doubtful content: calms above 10 %, a record shorter than a year, gaps
        longer than 24 h, ignored columns, very high speeds, directions that are not
        multiples of a given direction step; a station or grid point farther from the site
        than ``STATION_WARN_KM``.

    Raises
    ------
    InputFileError
        A file does not exist.
    InputError
        Any malformed content, naming the file, the line (header = line 1) and the value; or
        more than ``max_missing_percent`` missing hours (with the share and the longest gap);
        or a direction_step_deg outside 0..45 (named ``weather.direction_step_deg``).

    Notes
    -----
    The steps, in order: check the options; read each file and join them in time order
    (``hourly_columns``); check every value; place the rows on the hourly timeline and apply
    the missing-hour rule (``hourly_rules``); make the hours used (calm rule, floor speed,
    stability, direction step); summarise the record and warn about it.
    """
    options = _checked_options(
        latitude_deg,
        longitude_deg,
        anemometer_height_m,
        utc_offset_h,
        calm_threshold_m_s,
        min_wind_speed_m_s,
        max_missing_percent,
        direction_step_deg,
    )
    files = read_record_files(paths, source, utc_offset_h, latitude_deg, longitude_deg)
    rows = _joined_rows(files)
    hour_index, n_expected = _hour_index(rows)
    timeline = _usable_hours(
        rows,
        hour_index,
        n_expected,
        calm_threshold_m_s,
        max_missing_percent,
        temperature_required,
    )
    weather, filled, step = _hours_used(rows, timeline, options)
    summary = _summary(rows, timeline, weather, filled, step, options)
    summary["record_position"] = record_position(
        latitude_deg,
        longitude_deg,
        station_latitude_deg,
        station_longitude_deg,
        summary["grid_point"],
    )
    summary["by_year"] = _by_year(rows, timeline, weather, step)
    summary["temperature_required"] = bool(temperature_required)
    _warn_about_record(summary, rows, timeline, options)
    return weather, summary


def _checked_options(
    latitude_deg,
    longitude_deg,
    anemometer_height_m,
    utc_offset_h,
    calm_threshold_m_s,
    min_wind_speed_m_s,
    max_missing_percent,
    direction_step_deg,
) -> _Options:
    """Check the options, each in its range (a NaN fails), then the direction step (0..45,
    or None to infer it); raise naming the first one out of range."""
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
    return _Options(
        latitude_deg,
        longitude_deg,
        anemometer_height_m,
        utc_offset_h,
        calm_threshold_m_s,
        min_wind_speed_m_s,
        max_missing_percent,
        _checked_direction_step(direction_step_deg),
    )


def _hours_used(
    rows: _Rows, timeline: _Timeline, options: _Options
) -> tuple[HourlyWeather, np.ndarray, float]:
    """The hours used as an :class:`HourlyWeather`: the calm rule's directions, the speeds
    raised to the floor, the stability classes and the direction spread.

    Returns the weather, the mask of the rows (all of them) whose calm direction was filled,
    and the record's direction step [deg] (given or inferred).
    """
    direction, filled = _calm_directions(rows, timeline)
    used = timeline.used
    times_s = rows.time_utc[used].astype("datetime64[s]")
    stability_index = _stability_index(
        rows, used, times_s, options.latitude_deg, options.longitude_deg
    )
    used_direction = direction[used].astype(float)
    step, spread = _direction_step_and_spread(used_direction, options.given_step_deg, rows)
    weather = HourlyWeather(
        times_s,
        used_direction,
        np.maximum(rows.speed_m_s[used], options.min_wind_speed_m_s),
        stability_index,
        rows.temperature_c[used].astype(float),
        float(options.anemometer_height_m),
        spread,
        rows.year[used].astype(int),
    )
    return weather, filled, step


def _summary(
    rows: _Rows,
    timeline: _Timeline,
    weather: HourlyWeather,
    filled: np.ndarray,
    step: float,
    options: _Options,
) -> dict:
    """The summary of a record (keys: see :func:`read_hourly_record`)."""
    used, n_used, n_expected = timeline.used, timeline.n_used, timeline.n_expected
    observed = rows.speed_m_s[used]
    n_calm = int(timeline.calm[used].sum())
    light = (~timeline.calm[used]) & (observed < options.min_wind_speed_m_s)
    by_point = hours_by_sector(weather.direction_deg, 16, step)
    prevailing = float(np.argmax(by_point) * 22.5)
    share = np.bincount(weather.stability_index, minlength=len(STABILITY_CLASSES)) / n_used
    offsets = sorted(set().union(*(f.offsets for f in rows.files)))
    spread = weather.direction_step_deg
    return {
        "files": [f.name for f in rows.files],
        "latitude_deg": float(options.latitude_deg),
        "longitude_deg": float(options.longitude_deg),
        "first_time_utc": _utc_text(rows.time_utc[0]),
        "last_time_utc": _utc_text(rows.time_utc[-1]),
        "time_offsets": (
            f"given in the file(s): {', '.join(offsets)}"
            if offsets
            else f"utc_offset_h = {options.utc_offset_h:g}"
        ),
        "hours_expected": n_expected,
        "hours_used": n_used,
        "hours_missing": timeline.n_missing,
        "missing_percent": timeline.missing_percent,
        "gap_count": len(timeline.gaps),
        "gaps": timeline.gaps[:_MAX_GAPS_LISTED],
        "calm_threshold_m_s": float(options.calm_threshold_m_s),
        "min_wind_speed_m_s": float(options.min_wind_speed_m_s),
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
        "direction_rule": _direction_rule(step, spread, options.given_step_deg is not None),
        "stability_share": {c: float(share[i]) for i, c in enumerate(STABILITY_CLASSES)},
        "stability_method": STABILITY_GIVEN if rows.given_class else STABILITY_TURNER,
        "temperature_c": _temperature_summary(weather.temperature_c),
        "years_covered": sorted({int(y) for y in rows.year[used]}),
        "record_years": round(n_expected / _HOURS_PER_MEAN_YEAR, 3),
        "anemometer_height_m": float(options.anemometer_height_m),
        "calm_rule": CALM_RULE,
        "missing_rule": MISSING_RULE,
        "format": rows.files[0].source["format"],
        "sources": {f.name: f.source for f in rows.files},
        "grid_point": _grid_point(rows),
    }


def record_position(
    site_latitude_deg: float,
    site_longitude_deg: float,
    station_latitude_deg: float | None,
    station_longitude_deg: float | None,
    grid_point: dict | None = None,
) -> dict:
    """A weather record's position and its distance from the site [km] (WGS 84 geodesic),
    with a WeatherWarning past STATION_WARN_KM.

    Parameters
    ----------
    site_latitude_deg, site_longitude_deg : float
        The site [deg].
    station_latitude_deg, station_longitude_deg : float, optional
        The station's position as given [deg].
    grid_point : dict, optional
        A NetCDF record's grid point (the summary's ``grid_point``); it wins over a station
        position given.

    Returns
    -------
    dict
        position (in words; None where not known), latitude_deg, longitude_deg,
        distance_km, rule (the warning's, in words).
    """
    rule = f"a warning past {STATION_WARN_KM:g} km from the site (common practice, no source)"
    lat, lon = station_latitude_deg, station_longitude_deg
    if grid_point is not None:
        where = (
            "the reanalysis grid point nearest the site (values by "
            f"{grid_point['grid_point_rule']})"
        )
        lat, lon = grid_point["grid_latitude_deg"], grid_point["grid_longitude_deg"]
    elif lat is not None and lon is not None:
        where = "the station position given"
    else:
        return {"position": None, "distance_km": None, "rule": rule}
    from pyproj import Geod

    _, _, metres = Geod(ellps="WGS84").inv(site_longitude_deg, site_latitude_deg, lon, lat)
    distance_km = round(float(metres) / 1000.0, 2)
    if distance_km > STATION_WARN_KM:
        _warn(
            f"the weather record's position ({where}) is {distance_km:.1f} km from the site, "
            f"more than {STATION_WARN_KM:g} km; check that it represents the site's wind",
            parameters=("station_latitude_deg", "station_longitude_deg"),
        )
    return {
        "position": where,
        "latitude_deg": float(lat),
        "longitude_deg": float(lon),
        "distance_km": distance_km,
        "rule": rule,
    }


def _by_year(rows: _Rows, timeline: _Timeline, weather: HourlyWeather, step: float) -> list:
    """Per calendar year (as the source writes it) of the used hours: hours used and missing,
    calm %, mean speed after raising and the prevailing direction."""
    years = rows.year[timeline.used]
    expected = rows.year  # the rows of each year (missing hours inside a year are not rows)
    out = []
    for year in sorted({int(y) for y in years}):
        mine = years == year
        by_point = hours_by_sector(weather.direction_deg[mine], 16, step)
        prevailing = float(np.argmax(by_point) * 22.5)
        calm = timeline.calm[timeline.used][mine]
        out.append(
            {
                "year": year,
                "hours_used": int(mine.sum()),
                "rows_in_files": int((expected == year).sum()),
                "calm_percent": 100.0 * float(calm.mean()),
                "mean_speed_m_s": float(weather.speed_m_s[mine].mean()),
                "prevailing_from_words": compass_words(prevailing),
            }
        )
    return out


def _grid_point(rows: _Rows) -> dict | None:
    """A NetCDF record's grid point (the first file's; a warning where the files differ)."""
    points = [f.source for f in rows.files if f.source.get("format") == "netcdf"]
    if not points:
        return None
    keys = ("grid_latitude_deg", "grid_longitude_deg", "grid_point_rule", "distance_km")
    first = {k: points[0][k] for k in keys}
    if any({k: p[k] for k in keys} != first for p in points[1:]):
        _warn(f"{rows.names}: the files' grid points differ; the first file's is reported")
    return first


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
    options: _Options,
) -> None:
    """WeatherWarnings on the record as a whole, in this order: many calms, shorter than a
    year, long gaps, a speed so high it suggests the wrong unit."""
    names = rows.names
    calm_threshold_m_s, min_wind_speed_m_s = options.calm_threshold_m_s, options.min_wind_speed_m_s
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
    if summary["format"] == "netcdf" and options.anemometer_height_m != 10.0:
        _warn(
            f"{names}: a reanalysis gives the wind 10 m above ground, but "
            f"anemometer_height_m = {options.anemometer_height_m:g} is given",
            parameters=("anemometer_height_m",),
        )
    observed = rows.speed_m_s[timeline.used]
    if observed.max() > _FAST_SPEED_M_S:
        i = timeline.used[int(np.argmax(observed))]
        _warn(
            f"{rows.where(i)}: speed_m_s "
            f"{observed.max():g} is above {_FAST_SPEED_M_S:g} m/s; check the unit "
            "(knots?)"
        )
