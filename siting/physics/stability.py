"""Pasquill stability class from hourly weather by Turner's net-radiation-index method.

Pure functions on numpy arrays: no files, no printing. Inputs are the 10 m wind speed, total
cloud cover, cloud ceiling (optional), solar elevation and the day/night flag of Turner's
method (both from ``solar.py``); the output is the stability index 0..5 for Pasquill classes
A..F, the indexing used by ``plume.py``. Turner's class 7 (G, extremely stable) is merged into
F, as in regulatory use [EPA2000].

Turner's class table (Table 6-4 of [EPA2000]) is a fixed published key, not a tunable
coefficient, so it lives here next to the procedure that indexes it rather than in ``config/``.

What is not here: the solar position (``solar.py``), reading weather files and turning hourly
classes into a frequency table (``weather_hourly.py``), and other stability schemes (sigma-theta,
solar radiation/delta-T, Monin-Obukhov length).

References
----------
.. [Turner1964] D.B. Turner, "A diffusion model for an urban area", J. Appl. Meteorol. 3 (1964)
   83-91 (net radiation index and class table).
.. [EPA2000] US EPA, "Meteorological Monitoring Guidance for Regulatory Modeling Applications",
   EPA-454/R-99-005, Feb. 2000, Sect. 6.4.1: Table 6-4 (Turner's key to the P-G stability
   categories; values confirmed), Table 6-5 (insolation class vs solar altitude; thresholds
   from memory) and the net-radiation-index procedure of Sect. 6.4.1.1 (section number and
   wording from memory; see :func:`net_radiation_index`).
.. [Pasquill1961] F. Pasquill, "The estimation of the dispersion of windborne material",
   Meteorol. Mag. 90 (1961) 33-49 (overcast day or night -> D).
"""

from __future__ import annotations

import numpy as np

KNOT_M_S = 1852.0 / 3600.0  # 1 international knot = 1852 m / 3600 s (definition), 0.514444 m/s

_TENTHS_PER_OKTA = 10.0 / 8.0  # cloud cover: 8 oktas (eighths) = 10 tenths = whole sky
_OVERCAST_TENTHS = 10.0
_LOW_CEILING_FT = 7000.0  # [EPA2000] Sect. 6.4.1.1: "ceiling < 7000 ft"
_HIGH_CEILING_FT = 16000.0  # [EPA2000] Sect. 6.4.1.1: "7000 <= ceiling < 16000 ft"
_NIGHT_CLEAR_MAX_TENTHS = 4.0  # night: cloud <= 4/10 -> NRI -2, otherwise -1
_DAY_CLEAR_MAX_TENTHS = 5.0  # day: cloud <= 5/10 -> NRI = insolation class

#: [EPA2000] Table 6-4 (= [Turner1964]): Turner class 1..7 (A..G) by wind-speed row (knots)
#: and net radiation index; columns are NRI 4, 3, 2, 1, 0, -1, -2.
_TURNER_CLASS_TABLE = np.array(
    [
        [1, 1, 2, 3, 4, 6, 7],  # 0, 1 kt
        [1, 2, 2, 3, 4, 6, 7],  # 2, 3 kt
        [1, 2, 3, 4, 4, 5, 6],  # 4, 5 kt
        [2, 2, 3, 4, 4, 5, 6],  # 6 kt
        [2, 2, 3, 4, 4, 4, 5],  # 7 kt
        [2, 3, 3, 4, 4, 4, 5],  # 8, 9 kt
        [3, 3, 4, 4, 4, 4, 5],  # 10 kt
        [3, 3, 4, 4, 4, 4, 4],  # 11 kt
        [3, 4, 4, 4, 4, 4, 4],  # >= 12 kt
    ],
    dtype=np.int64,
)
#: [EPA2000] Table 6-5 class edges [deg]: <= 15 -> 1, (15, 35] -> 2, (35, 60] -> 3, > 60 -> 4
_INSOLATION_CLASS_EDGES_DEG = (15.0, 35.0, 60.0)
_MAX_NRI = 4  # column 0 of the table
#: row of the table for a whole-knot speed 0..12 (12 stands for ">= 12")
_ROW_BY_KNOT = np.array([0, 0, 1, 1, 2, 2, 3, 4, 5, 5, 6, 7, 8], dtype=np.int64)
_PASQUILL_F_CLASS = 6  # Turner class 7 (G) is reported as 6 (F) [EPA2000]


def insolation_class(solar_elevation_deg) -> np.ndarray:
    """Insolation class number 1..4 from the solar elevation, [EPA2000] Table 6-5.

    Parameters
    ----------
    solar_elevation_deg : float or ndarray
        Solar elevation (altitude) above the horizon [deg]; finite.

    Returns
    -------
    insolation_class : ndarray of int
        4 (strong) above 60 deg; 3 (moderate) for 35 < elevation <= 60; 2 (slight) for
        15 < elevation <= 35; 1 (weak) at or below 15 deg (including a sun below the horizon).

    Raises
    ------
    ValueError
        If an elevation is NaN or infinite.

    Notes
    -----
    Thresholds as in [EPA2000] Table 6-5, from memory (status M).
    """
    elevation_deg = np.asarray(solar_elevation_deg, dtype=float)
    bad = ~np.isfinite(elevation_deg)
    if bad.any():
        raise ValueError(
            f"solar_elevation_deg must be finite, got {elevation_deg[bad].ravel()[:5].tolist()}"
        )
    # [EPA2000] Table 6-5: a boundary value belongs to the lower class (right=True)
    return 1 + np.digitize(elevation_deg, _INSOLATION_CLASS_EDGES_DEG, right=True).astype(np.int64)


def net_radiation_index(solar_elevation_deg, night, cloud_tenths, ceiling_ft=None) -> np.ndarray:
    """Turner's net radiation index (NRI), -2..4, from sun, cloud cover and ceiling.

    Parameters
    ----------
    solar_elevation_deg : float or ndarray
        Solar elevation [deg]. Used only for daytime hours not already set by the overcast rule;
        it may be NaN elsewhere.
    night : bool or ndarray of bool
        True for Turner's night, 1 h before sunset to 1 h after sunrise (``solar.is_night``).
    cloud_tenths : float or ndarray
        Total cloud cover [tenths of the sky], 0..10.
    ceiling_ft : float or ndarray, optional
        Cloud ceiling height [ft] (aviation reporting unit, as in the source), >= 0; ``inf`` for
        unlimited. None or NaN: not reported, see Notes.

    Returns
    -------
    nri : ndarray of int
        Net radiation index, broadcast shape of the inputs.

    Raises
    ------
    ValueError
        If cloud_tenths is outside 0..10 or NaN, a ceiling is negative, or a daytime elevation
        that is needed is not finite.

    Notes
    -----
    Procedure of [EPA2000] Sect. 6.4.1.1 after [Turner1964] (from memory; the reading of the
    10/10 step in particular is unverified):

    1. Total cloud 10/10 and ceiling < 7000 ft: NRI = 0, day or night.
    2. Night: cloud <= 4/10 -> NRI = -2; cloud > 4/10 -> NRI = -1.
    3. Day: insolation class IC from the solar elevation (:func:`insolation_class`).
       Cloud <= 5/10 -> NRI = IC. Cloud > 5/10: subtract 2 if ceiling < 7000 ft; subtract 1 if
       7000 <= ceiling < 16000 ft; subtract 1 more if cloud = 10/10 (reachable only with
       ceiling >= 7000 ft, step 1 having taken the lower ones). The result is at least 1.

    Ceiling not reported (None or NaN) -- our assumption, no source:

    - overcast (10/10) -> NRI = 0, day or night, matching [Pasquill1961] "overcast day or
      night -> D" (every Table 6-4 column for NRI 0 gives D);
    - cloud > 5/10 but not overcast, by day -> treated as a 7000-16000 ft ceiling (subtract 1);
    - nights that are not overcast do not use the ceiling.
    """
    elevation_deg, night, cloud_tenths, ceiling_ft = _nri_inputs(
        solar_elevation_deg, night, cloud_tenths, ceiling_ft
    )
    _check_cloud_and_ceiling(cloud_tenths, ceiling_ft)
    overcast = cloud_tenths >= _OVERCAST_TENTHS
    reported, low, middle = _ceiling_bands(ceiling_ft)

    # step 1, [EPA2000] 6.4.1.1; unreported ceiling with overcast: our assumption (Notes)
    neutral = overcast & (low | ~reported)

    # step 2, night
    nri_night = np.where(cloud_tenths <= _NIGHT_CLEAR_MAX_TENTHS, -2, -1)

    # step 3, day
    nri_day = _day_nri(
        elevation_deg, ~neutral & ~night, cloud_tenths, overcast, reported, low, middle
    )

    return np.where(neutral, 0, np.where(night, nri_night, nri_day)).astype(np.int64)


def _nri_inputs(solar_elevation_deg, night, cloud_tenths, ceiling_ft):
    """The inputs of :func:`net_radiation_index` as float/bool arrays of one broadcast shape.

    A ceiling of None (not reported) becomes NaN [ft].
    """
    elevation_deg = np.asarray(solar_elevation_deg, dtype=float)
    night = np.asarray(night, dtype=bool)
    cloud_tenths = np.asarray(cloud_tenths, dtype=float)
    if ceiling_ft is None:
        ceiling_ft = np.nan
    ceiling_ft = np.asarray(ceiling_ft, dtype=float)
    return np.broadcast_arrays(elevation_deg, night, cloud_tenths, ceiling_ft)


def _check_cloud_and_ceiling(cloud_tenths, ceiling_ft):
    """Raise ValueError unless cloud is 0..10 tenths and no ceiling [ft] is negative.

    NaN cloud is rejected; a NaN ceiling (not reported) is allowed.
    """
    bad = ~((cloud_tenths >= 0.0) & (cloud_tenths <= _OVERCAST_TENTHS))
    if bad.any():
        raise ValueError(
            f"cloud_tenths must be in 0..10, got {np.unique(cloud_tenths[bad])[:5].tolist()}"
        )
    bad = ceiling_ft < 0.0  # NaN compares False: not reported is allowed
    if bad.any():
        raise ValueError(
            f"ceiling_ft must be >= 0 (inf = unlimited, NaN = not reported), got "
            f"{np.unique(ceiling_ft[bad])[:5].tolist()}"
        )


def _ceiling_bands(ceiling_ft):
    """Masks (reported, low, middle) of the ceiling [ft], [EPA2000] Sect. 6.4.1.1.

    low: reported and < 7000 ft; middle: reported and 7000 <= ceiling < 16000 ft.
    """
    reported = ~np.isnan(ceiling_ft)
    low = reported & (ceiling_ft < _LOW_CEILING_FT)
    middle = reported & (ceiling_ft >= _LOW_CEILING_FT) & (ceiling_ft < _HIGH_CEILING_FT)
    return reported, low, middle


def _day_nri(elevation_deg, day_needed, cloud_tenths, overcast, reported, low, middle):
    """Step 3 of :func:`net_radiation_index`: the daytime NRI, 1..4, for every element.

    ``day_needed`` marks the hours whose elevation [deg] must be finite (day, not set by
    step 1); elsewhere the elevation is replaced by 0 and the result is not used.
    """
    bad = day_needed & ~np.isfinite(elevation_deg)
    if bad.any():
        raise ValueError(
            "solar_elevation_deg must be finite for daytime hours, got "
            f"{elevation_deg[bad].ravel()[:5].tolist()}"
        )
    ic = insolation_class(np.where(day_needed, elevation_deg, 0.0))
    cloudy = cloud_tenths > _DAY_CLEAR_MAX_TENTHS
    reduction = (
        2 * (cloudy & low)
        + 1 * (cloudy & (middle | ~reported))  # unreported: as 7000-16000 ft (our assumption)
        + 1 * (cloudy & overcast & reported & ~low)  # 10/10 step, ceiling >= 7000 ft
    )
    return np.maximum(ic - reduction, 1)


def turner_stability_index(
    speed_m_s, cloud_oktas, solar_elevation_deg, night, ceiling_ft=None
) -> np.ndarray:
    """Pasquill stability index 0..5 (A..F) by Turner's method, G merged into F.

    Parameters
    ----------
    speed_m_s : float or ndarray
        Hourly mean wind speed at about 10 m [m s-1], >= 0.
    cloud_oktas : int or ndarray
        Total cloud cover [oktas], whole numbers 0..8 (9, "sky obscured", is not accepted).
    solar_elevation_deg : float or ndarray
        Solar elevation [deg] (``solar.solar_elevation_deg``); may be NaN at night.
    night : bool or ndarray of bool
        Turner's night flag (``solar.is_night``).
    ceiling_ft : float or ndarray, optional
        Cloud ceiling [ft]; None or NaN when not reported (see :func:`net_radiation_index`).

    Returns
    -------
    stability_index : ndarray of int
        0..5 for Pasquill A..F, broadcast shape of the inputs.

    Raises
    ------
    ValueError
        If cloud_oktas is not a whole number 0..8, or speed_m_s is negative or not finite
        (and as :func:`net_radiation_index`).

    Notes
    -----
    Cloud in oktas becomes tenths as oktas x 10/8 (so 3 oktas = 3.75/10 is a "clear" night and
    4 oktas = 5/10 a "cloudy" one, matching Pasquill's <= 3/8 and >= 4/8 night columns). The
    speed is converted to knots with :data:`KNOT_M_S` and rounded to the nearest whole knot,
    halves upward (our choice; the source tabulates whole knots). [EPA2000] Table 6-4 then gives
    Turner's class 1..7 from (speed row, NRI); rows 0-1, 2-3, 4-5, 6, 7, 8-9, 10, 11, >= 12 kt.
    Class 7 (G) is reported as 6 (F), and the index is class - 1.
    """
    speed_m_s = np.asarray(speed_m_s, dtype=float)
    bad = ~(np.isfinite(speed_m_s) & (speed_m_s >= 0.0))
    if bad.any():
        raise ValueError(
            f"speed_m_s must be finite and >= 0, got {np.unique(speed_m_s[bad])[:5].tolist()}"
        )
    cloud_oktas = np.asarray(cloud_oktas, dtype=float)
    bad = ~((cloud_oktas >= 0.0) & (cloud_oktas <= 8.0) & (cloud_oktas == np.round(cloud_oktas)))
    if bad.any():
        raise ValueError(
            "cloud_oktas must be whole numbers 0..8, got "
            f"{np.unique(cloud_oktas[bad])[:5].tolist()}"
        )
    nri = net_radiation_index(
        solar_elevation_deg, night, cloud_oktas * _TENTHS_PER_OKTA, ceiling_ft=ceiling_ft
    )
    speed_kt = np.floor(speed_m_s / KNOT_M_S + 0.5)  # nearest whole knot, halves up
    turner_class = _turner_class(speed_kt, nri)
    return np.minimum(turner_class, _PASQUILL_F_CLASS) - 1


def _turner_class(speed_kt, nri):
    """Turner class 1..7 from whole-knot speed (>= 0) and NRI (-2..4), [EPA2000] Table 6-4."""
    speed_kt, nri = np.broadcast_arrays(np.asarray(speed_kt), np.asarray(nri))
    row = _ROW_BY_KNOT[np.minimum(speed_kt, _ROW_BY_KNOT.size - 1).astype(np.int64)]
    column = _MAX_NRI - nri.astype(np.int64)
    return _TURNER_CLASS_TABLE[row, column]
