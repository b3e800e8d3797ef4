"""Directions and speeds of an hourly record: naming, binning, classing, the frequency table.

What an hourly record is binned by, shared by the record's summary (``hourly_record.py``), the
weather charts (``presentation/weather_figures.py``) and ``siting weather``'s frequency table:

* :func:`compass_words` -- a direction in words (16-point compass).
* :func:`direction_step_deg` -- the step directions were reported in.
* :func:`hours_by_sector` -- hours per direction sector, each reported direction spread over
  its step.
* :func:`speed_class_index`, :func:`speed_class_labels` -- speed classes and their labels.
* :func:`frequency_table_from_hourly` -- an hourly record -> a joint frequency table (DataFrame).

A reader: computes from the hours, writes nothing.
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence
from itertools import pairwise

import numpy as np
import pandas as pd

from siting.dispersion.hourly import HourlyWeather
from siting.errors import InputError, WeatherWarning
from siting.physics.plume import STABILITY_CLASSES

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
_DIRECTION_STEPS_DEG = (22.5, 10.0, 5.0, 1.0)  # reporting resolutions recognised


def compass_words(direction_deg: float) -> str:
    """'from the south-west (225°)': the nearest of the 16 compass points, in words.

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
    return f"from the {COMPASS_POINTS[k]} ({direction_deg % 360.0:g}°)"


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


def _all_multiples(direction_deg: np.ndarray, step_deg: float) -> bool:
    ratio = np.asarray(direction_deg, dtype=float) / step_deg
    return bool(np.allclose(ratio, np.round(ratio), atol=1e-6))


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


# --- the frequency table of an hourly record ---------------------------------------------------


def _warn_uneven_sectors(weather: HourlyWeather, n_sectors: int) -> None:
    """A WeatherWarning when reported directions fall unevenly into the table's sectors."""
    step = direction_step_deg(weather.direction_deg)

    def even(n: int) -> bool:
        ratio = 360.0 / n / step
        return abs(ratio - round(ratio)) < 1e-9

    if step <= 0 or even(n_sectors):
        return
    better = [str(n) for n in (8, 12, 16, 18, 24, 36) if even(n)]
    message = (
        f"directions are reported in {step:g} deg steps, which do not divide the "
        f"{360.0 / n_sectors:g} deg sectors evenly, so some sectors of the frequency table "
        f"hold more reported directions than others; {' or '.join(better)} sectors avoid "
        "that"
    )
    # shown at the call of frequency_table_from_hourly, as the record's other warnings are
    warnings.warn(WeatherWarning(message), stacklevel=3)


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
