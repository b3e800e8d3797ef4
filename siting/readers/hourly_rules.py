"""The rules of an hourly record: the timeline, missing hours, calms, stability, direction step.

The middle steps of :func:`siting.readers.hourly_record.read_hourly_record`, applied to the
rows as read (``hourly_columns.py``); the rules in words are in ``hourly_record.py``'s module
docstring and, for the summary, in :data:`CALM_RULE` and :data:`MISSING_RULE`:

* :func:`_checked_direction_step` -- the given direction step, checked.
* :func:`_hour_index` -- every row placed on the hourly timeline.
* :func:`_usable_hours` -- the missing-hour rule: the hours used, the calms, the gaps.
* :func:`_calm_directions` -- the calm rule's directions.
* :func:`_stability_index` -- the Pasquill class of each hour used (given, or Turner's method).
* :func:`_direction_step_and_spread` -- the reporting step and each hour's spread.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from siting.errors import InputError
from siting.physics.solar import is_night, solar_elevation_deg
from siting.physics.stability import turner_stability_index
from siting.readers.hourly_columns import _Rows, _utc_text, _warn
from siting.readers.hourly_table import _all_multiples, direction_step_deg

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
#: an inferred step at or below this is taken as exact directions, not spread (our choice)
_EXACT_STEP_DEG = 1.0
_MAX_DIRECTION_STEP_DEG = 45.0  # a coarser step (8 points or fewer) is no direction at all


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
    temperature_required: bool = False,
) -> _Timeline:
    """The missing-hour rule: which hours can be used, the calms and the gaps.

    An hour is used when its speed and its class (or cloud cover) are given and its direction
    too, unless it is a calm (the calm rule gives it one), and its temperature where
    ``temperature_required``. Returns the :class:`_Timeline`.
    Raises when no hour can be used, when more than ``max_missing_percent`` of the expected
    hours are missing, or when every usable hour is calm (no direction to give the calms).
    """
    calm = rows.speed_m_s < calm_threshold_m_s  # False where speed is NaN
    if rows.given_class:
        has_class = rows.method_value >= 0
    else:
        has_class = np.isfinite(rows.method_value)
    valid = np.isfinite(rows.speed_m_s) & has_class & (np.isfinite(rows.direction_deg) | calm)
    if temperature_required:
        valid &= np.isfinite(rows.temperature_c)
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
