"""Solar elevation from UTC time and position, and the day/night split of Turner's method.

Pure functions on numpy arrays: no files, no printing, no time zones beyond UTC. The solar
position follows the NOAA solar calculator equations [NOAA-GMD], which are the low-accuracy
solar coordinates of [Meeus1991] plus the NOAA approximate refraction correction. They are
plenty for choosing a Pasquill stability class from hourly weather (``stability.py``); they are
not an ephemeris.

What is not here: the stability classes themselves (``stability.py``), solar azimuth, sunrise
and sunset times (``is_night`` works from elevations one hour either side instead).

References
----------
.. [NOAA-GMD] NOAA Global Monitoring Division (ESRL/GML), "Solar Calculation Details" and the
   NOAA Solar Calculator spreadsheet (NOAA_Solar_Calculations_day.xls), column formulas,
   https://gml.noaa.gov/grad/solcalc/calcdetails.html. States that the calculations are "based
   on equations from Astronomical Algorithms, by Jean Meeus", that sunrise/sunset are
   "theoretically accurate to within a minute for locations between +/- 72 deg latitude, and
   within 10 minutes outside of those latitudes", and gives the refraction correction used
   here (all confirmed on that page). The series coefficients below are those of the
   spreadsheet (from memory; each one also appears in [Meeus1991] at the chapter cited).
.. [Meeus1991] J. Meeus, "Astronomical Algorithms", Willmann-Bell, Richmond VA, 1991 (1st ed.):
   Ch. 7 Julian Day; Ch. 21 obliquity of the ecliptic, Eq. 21.2; Ch. 24 solar coordinates
   (low accuracy, "0.01 degree"); Ch. 27 equation of time, Eq. 27.3. Chapter and equation
   numbers from memory (2nd ed. 1998: Ch. 7, 22, 25, 28).
.. [EPA2000] US EPA, "Meteorological Monitoring Guidance for Regulatory Modeling Applications",
   EPA-454/R-99-005, Feb. 2000, Sect. 6.4.1 (Turner's method; night definition from memory).
"""

from __future__ import annotations

import numpy as np

from siting.physics.constants import SECONDS_PER_DAY

_JULIAN_DAY_AT_UNIX_EPOCH = 2440587.5  # JD of 1970-01-01T00:00 UTC, [Meeus1991] Ch. 7
_JULIAN_DAY_AT_J2000 = 2451545.0  # JD of the epoch J2000.0 (2000-01-01T12:00), [Meeus1991] Ch. 7
_DAYS_PER_JULIAN_CENTURY = 36525.0  # definition of the Julian century
_MINUTES_PER_DAY = SECONDS_PER_DAY / 60.0
_MINUTES_PER_DEGREE_LONGITUDE = _MINUTES_PER_DAY / 360.0  # 4 min: the Earth turns 360 deg a day
_SECONDS_PER_HOUR = 3600.0
_ARCSEC_PER_DEG = 3600.0

#: Turner's night runs from this long before sunset to this long after sunrise, [EPA2000]
_NIGHT_MARGIN_S = 1.0 * _SECONDS_PER_HOUR
#: apparent (refracted) elevation of the sun's centre that counts as sunrise/sunset here
_HORIZON_APPARENT_DEG = 0.0


def solar_elevation_deg(time_utc, latitude_deg: float, longitude_deg: float) -> np.ndarray:
    """Apparent elevation of the sun's centre above the horizon, NOAA solar calculator method.

    Parameters
    ----------
    time_utc : array_like of datetime64
        Instants in UTC: a numpy ``datetime64`` array of any unit, or anything
        ``np.asarray(..., dtype="datetime64[s]")`` accepts (ISO strings, ``datetime``). Naive
        values are taken as UTC. NaT gives NaN.
    latitude_deg : float or ndarray
        Geographic latitude [deg], north positive, in [-90, 90].
    longitude_deg : float or ndarray
        Geographic longitude [deg], east positive, in [-180, 180].

    Returns
    -------
    elevation_deg : ndarray of float
        Apparent solar elevation [deg], refraction included; broadcast shape of the inputs.
        Negative below the horizon.

    Raises
    ------
    ValueError
        If a latitude or longitude is not finite or out of range.

    Notes
    -----
    The column formulas of the NOAA solar calculator [NOAA-GMD], step by step, with T the time
    in Julian centuries from J2000.0 (angles in degrees):

    - Julian day from the UTC instant, exact (no 1901-2099 spreadsheet shortcut) [Meeus1991]
      Ch. 7; UT is used in place of dynamical time, as NOAA does (Delta T ~ 70 s moves the
      sun's longitude by < 0.001 deg).
    - geometric mean longitude L0, mean anomaly M, orbital eccentricity e, equation of centre
      C, true and apparent longitude lambda (nutation/aberration term with Omega =
      125.04 - 1934.136 T) [Meeus1991] Ch. 24;
    - mean obliquity and its correction eps [Meeus1991] Eq. 21.2; declination
      delta = asin(sin eps sin lambda) [Meeus1991] Ch. 24;
    - equation of time with y = tan^2(eps/2) [Meeus1991] Eq. 27.3;
    - true solar time = UTC minutes + equation of time + 4 min/deg x longitude; hour angle =
      true solar time / 4 - 180; zenith from the spherical cosine rule;
    - refraction correction, included as in the NOAA spreadsheet [NOAA-GMD] (standard
      atmosphere, no pressure/temperature input): 0 above 85 deg;
      (58.1/tan h - 0.07/tan^3 h + 0.000086/tan^5 h)" for 5..85 deg;
      (1735 - 518.2 h + 103.4 h^2 - 12.79 h^3 + 0.711 h^4)" for -0.575..5 deg;
      (-20.774/tan h)" below -0.575 deg (coefficient as printed on the NOAA details page).

    Accuracy: the low-accuracy solar coordinates are good to about 0.01 deg in the sun's
    longitude [Meeus1991] Ch. 24; NOAA states sunrise/sunset to within 1 min between
    +/-72 deg latitude and 10 min beyond [NOAA-GMD]. Near the horizon real refraction varies
    with the weather by several tenths of a degree, more than the method's own error.

    References
    ----------
    See the module docstring: [NOAA-GMD], [Meeus1991].
    """
    seconds = _unix_seconds(time_utc)
    latitude_deg, longitude_deg = _checked_position(latitude_deg, longitude_deg)
    return _apparent_elevation_deg(seconds, latitude_deg, longitude_deg)


def is_night(time_utc, latitude_deg: float, longitude_deg: float) -> np.ndarray:
    """Night in the sense of Turner's method: from 1 h before sunset to 1 h after sunrise.

    Parameters
    ----------
    time_utc : array_like of datetime64
        Instants in UTC, as for :func:`solar_elevation_deg`. NaT is not allowed.
    latitude_deg : float or ndarray
        Geographic latitude [deg], north positive, in [-90, 90].
    longitude_deg : float or ndarray
        Geographic longitude [deg], east positive, in [-180, 180].

    Returns
    -------
    night : ndarray of bool
        True where the instant counts as night; broadcast shape of the inputs.

    Raises
    ------
    ValueError
        If time_utc holds NaT, or a latitude or longitude is not finite or out of range.

    Notes
    -----
    [EPA2000] Sect. 6.4.1 defines night for Turner's method as "the period from one hour before
    sunset to one hour after sunrise" (definition from memory). Rather than computing sunrise
    and sunset times we test the sun one hour either side of t:

    - sun down at t + 1 h  <=>  sunset lies before t + 1 h  <=>  t >= sunset - 1 h (or the sun
      is still down before sunrise);
    - sun down at t - 1 h  <=>  t - 1 h is before sunrise  <=>  t < sunrise + 1 h (or the sun
      had already set).

    So night(t) = [elevation(t - 1 h) <= 0] or [elevation(t + 1 h) <= 0], and day is exactly
    [sunrise + 1 h, sunset - 1 h]. This also covers polar night (always night), midnight sun
    (never night) and days shorter than 2 h (always night, since no instant has the sun up
    both an hour before and an hour after).

    Sunrise and sunset are taken as the apparent (refraction-corrected, [NOAA-GMD]) elevation
    of the sun's centre crossing 0 deg. Almanac sunrise uses the upper limb (geometric centre
    at -0.833 deg), which is about 1-3 min earlier at mid-latitudes; for hourly weather the
    difference does not matter (our choice, no source).

    References
    ----------
    See the module docstring: [EPA2000], [NOAA-GMD].
    """
    seconds = _unix_seconds(time_utc)
    if np.isnan(seconds).any():
        where = np.flatnonzero(np.isnan(seconds).ravel())[:5].tolist()
        raise ValueError(f"time_utc must not contain NaT (missing time), got NaT at {where}")
    latitude_deg, longitude_deg = _checked_position(latitude_deg, longitude_deg)
    before_deg = _apparent_elevation_deg(seconds - _NIGHT_MARGIN_S, latitude_deg, longitude_deg)
    after_deg = _apparent_elevation_deg(seconds + _NIGHT_MARGIN_S, latitude_deg, longitude_deg)
    return (before_deg <= _HORIZON_APPARENT_DEG) | (after_deg <= _HORIZON_APPARENT_DEG)


def _unix_seconds(time_utc) -> np.ndarray:
    """UTC instants -> float seconds since 1970-01-01T00:00 UTC (NaT -> NaN)."""
    times = np.asarray(time_utc)
    if times.dtype.kind != "M":
        times = np.asarray(time_utc, dtype="datetime64[s]")
    return (times - np.datetime64(0, "s")) / np.timedelta64(1, "s")


def _checked_position(latitude_deg, longitude_deg):
    """Latitude and longitude as float arrays, checked for range."""
    latitude_deg = np.asarray(latitude_deg, dtype=float)
    longitude_deg = np.asarray(longitude_deg, dtype=float)
    bad = ~(np.abs(latitude_deg) <= 90.0)  # also catches NaN
    if bad.any():
        raise ValueError(
            f"latitude_deg must be in [-90, 90], got {latitude_deg[bad].ravel()[:5].tolist()}"
        )
    bad = ~(np.abs(longitude_deg) <= 180.0)
    if bad.any():
        raise ValueError(
            f"longitude_deg must be in [-180, 180] (east positive), got "
            f"{longitude_deg[bad].ravel()[:5].tolist()}"
        )
    return latitude_deg, longitude_deg


def _apparent_elevation_deg(seconds, latitude_deg, longitude_deg):
    """Apparent elevation [deg] from float seconds since the Unix epoch (inputs checked)."""
    true_deg = _true_elevation_deg(seconds, latitude_deg, longitude_deg)
    return true_deg + _refraction_deg(true_deg)


def _true_elevation_deg(seconds, latitude_deg, longitude_deg):
    """Geometric (unrefracted) solar elevation [deg], NOAA solar calculator [NOAA-GMD]."""
    rad = np.deg2rad
    julian_day = _JULIAN_DAY_AT_UNIX_EPOCH + seconds / SECONDS_PER_DAY  # [Meeus1991] Ch. 7
    t = (julian_day - _JULIAN_DAY_AT_J2000) / _DAYS_PER_JULIAN_CENTURY  # Julian centuries

    # [Meeus1991] Ch. 24, low-accuracy solar coordinates
    mean_longitude_deg = np.mod(280.46646 + t * (36000.76983 + t * 0.0003032), 360.0)
    mean_anomaly_deg = 357.52911 + t * (35999.05029 - 0.0001537 * t)
    eccentricity = 0.016708634 - t * (0.000042037 + 0.0000001267 * t)
    m = rad(mean_anomaly_deg)
    centre_deg = (
        np.sin(m) * (1.914602 - t * (0.004817 + 0.000014 * t))
        + np.sin(2 * m) * (0.019993 - 0.000101 * t)
        + np.sin(3 * m) * 0.000289
    )
    true_longitude_deg = mean_longitude_deg + centre_deg
    omega = rad(125.04 - 1934.136 * t)  # longitude of the Moon's ascending node
    apparent_longitude_deg = true_longitude_deg - 0.00569 - 0.00478 * np.sin(omega)

    # [Meeus1991] Eq. 21.2 mean obliquity, corrected for nutation as in [NOAA-GMD]
    arcsec = 21.448 - t * (46.815 + t * (0.00059 - t * 0.001813))
    mean_obliquity_deg = 23.0 + (26.0 + arcsec / 60.0) / 60.0
    obliquity = rad(mean_obliquity_deg + 0.00256 * np.cos(omega))
    declination = np.arcsin(np.sin(obliquity) * np.sin(rad(apparent_longitude_deg)))

    # [Meeus1991] Eq. 27.3 equation of time [min]
    y = np.tan(obliquity / 2.0) ** 2
    l0 = rad(mean_longitude_deg)
    e = eccentricity
    equation_of_time_min = 4.0 * np.rad2deg(
        y * np.sin(2 * l0)
        - 2 * e * np.sin(m)
        + 4 * e * y * np.sin(m) * np.cos(2 * l0)
        - 0.5 * y * y * np.sin(4 * l0)
        - 1.25 * e * e * np.sin(2 * m)
    )

    # [NOAA-GMD] true solar time [min] and hour angle [deg]; time zone 0 (UTC)
    utc_minutes = np.mod(seconds, SECONDS_PER_DAY) / 60.0
    true_solar_time_min = np.mod(
        utc_minutes + equation_of_time_min + _MINUTES_PER_DEGREE_LONGITUDE * longitude_deg,
        _MINUTES_PER_DAY,
    )
    hour_angle = rad(true_solar_time_min / _MINUTES_PER_DEGREE_LONGITUDE - 180.0)

    lat = rad(latitude_deg)
    cos_zenith = np.sin(lat) * np.sin(declination) + np.cos(lat) * np.cos(declination) * np.cos(
        hour_angle
    )
    return 90.0 - np.rad2deg(np.arccos(np.clip(cos_zenith, -1.0, 1.0)))


def _refraction_deg(true_elevation_deg):
    """NOAA approximate atmospheric refraction [deg] for a geometric elevation [deg] [NOAA-GMD]."""
    h = np.asarray(true_elevation_deg, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        tan_h = np.tan(np.deg2rad(h))
        high_arcsec = 58.1 / tan_h - 0.07 / tan_h**3 + 0.000086 / tan_h**5
        low_arcsec = 1735.0 + h * (-518.2 + h * (103.4 + h * (-12.79 + h * 0.711)))
        below_arcsec = -20.774 / tan_h
    arcsec = np.select(
        [h > 85.0, h > 5.0, h > -0.575, h <= -0.575],
        [0.0, high_arcsec, low_arcsec, below_arcsec],
        default=np.nan,  # NaN elevation (NaT time) stays NaN
    )
    return arcsec / _ARCSEC_PER_DEG
