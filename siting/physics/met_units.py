"""Weather quantities in the units the model uses, from the units sources write them in.

The wind from its eastward and northward components (the meteorological convention: the
direction the wind blows FROM, clockwise from north), speeds from knots, km/h and m/s,
directions from degrees or tens of degrees, a cloud-cover fraction as whole oktas and heights
between metres and feet. Each conversion is its unit's exact definition:

* 1 knot = 1 international nautical mile per hour = 1852 m / 3600 s (the international
  nautical mile is 1852 m exactly, adopted by the International Hydrographic Conference,
  Monaco 1929; listed with the knot in the BIPM SI Brochure, 8th ed. (2006), Table 8; from
  memory).
* 1 km/h = 1000 m / 3600 s (definition).
* 1 international foot = 0.3048 m exactly (International Yard and Pound Agreement 1959;
  from memory).
* Oktas: eighths of the sky; WMO's okta scale counts 1 okta for "1/8 or less, but not zero"
  and 7 oktas for "7/8 or more, but not 8/8" (WMO, World Weather Information Service, "Oktas"
  table; confirmed), so any cloud at all is at least 1 okta and only a full sky is 8.

Nothing here reads a file; the readers (``siting/readers/weather_*.py``) call these on the
columns they read.
"""

from __future__ import annotations

import numpy as np

KNOT_M_S = 1852.0 / 3600.0  # [m s-1] per knot, exact (see the module docstring)
KM_H_M_S = 1000.0 / 3600.0  # [m s-1] per km/h, exact
FOOT_M = 0.3048  # [m] per international foot, exact

#: Speed units a source may write, with their size in m/s.
SPEED_UNITS_M_S = {"m/s": 1.0, "knots": KNOT_M_S, "km/h": KM_H_M_S}
#: Direction units a source may write, with their size in degrees ("tens": 27 = 270 deg).
DIRECTION_UNITS_DEG = {"deg": 1.0, "tens": 10.0}


def wind_from_components(u_m_s, v_m_s) -> tuple[np.ndarray, np.ndarray]:
    """Direction the wind blows from and its speed, from its eastward and northward components.

    Parameters
    ----------
    u_m_s, v_m_s : float or ndarray
        Eastward (u) and northward (v) components [m s-1] (CF standard names eastward_wind,
        northward_wind); NaN stays NaN.

    Returns
    -------
    direction_deg : ndarray
        Direction the wind blows FROM [deg], clockwise from north, in [0, 360): a wind
        blowing towards the east (u > 0, v = 0) comes from the west, 270 deg. A calm
        (u = v = 0) is given 0, the usual station code for "calm, no direction".
    speed_m_s : ndarray
        Horizontal speed [m s-1], sqrt(u^2 + v^2).

    Notes
    -----
    The meteorological convention (WMO: wind direction is where the wind comes from, measured
    clockwise from true north): direction = atan2(-u, -v) in degrees, taken modulo 360.
    """
    u = np.asarray(u_m_s, dtype=float)
    v = np.asarray(v_m_s, dtype=float)
    speed = np.hypot(u, v)
    direction = np.mod(np.degrees(np.arctan2(-u, -v)), 360.0)
    direction = np.where(speed == 0.0, 0.0, direction)
    # atan2 of tiny negative values can round to 360.0 after the modulo: keep [0, 360)
    direction = np.where(direction >= 360.0, 0.0, direction)
    return direction, speed


def speed_in_m_s(values, unit: str) -> np.ndarray:
    """Speeds in ``unit`` ("m/s", "knots" or "km/h") as m/s; NaN stays NaN.

    Parameters
    ----------
    values : float or ndarray
        Speeds in ``unit``.
    unit : {"m/s", "knots", "km/h"}
        Their unit.

    Returns
    -------
    ndarray
        Speeds [m s-1].

    Raises
    ------
    ValueError
        An unknown unit (naming the known ones).
    """
    if unit not in SPEED_UNITS_M_S:
        raise ValueError(f"speed unit {unit!r} unknown; use one of {', '.join(SPEED_UNITS_M_S)}")
    return np.asarray(values, dtype=float) * SPEED_UNITS_M_S[unit]


def direction_in_deg(values, unit: str) -> np.ndarray:
    """Directions in ``unit`` ("deg", or "tens" of degrees: 27 = 270 deg) as degrees.

    Parameters
    ----------
    values : float or ndarray
        Directions in ``unit``.
    unit : {"deg", "tens"}
        Their unit.

    Returns
    -------
    ndarray
        Directions [deg].

    Raises
    ------
    ValueError
        An unknown unit (naming the known ones).
    """
    if unit not in DIRECTION_UNITS_DEG:
        raise ValueError(
            f"direction unit {unit!r} unknown; use one of {', '.join(DIRECTION_UNITS_DEG)}"
        )
    return np.asarray(values, dtype=float) * DIRECTION_UNITS_DEG[unit]


def oktas_from_fraction(fraction) -> np.ndarray:
    """Cloud cover as a fraction of the sky (0..1) -> whole oktas 0..8 by WMO's okta scale.

    The nearest eighth, except that any cloud (fraction > 0) is at least 1 okta and any gap
    (fraction < 1) at most 7 oktas (WMO's definitions of 1 and 7 oktas; module docstring).
    NaN stays NaN; values outside 0..1 are the caller's to refuse.

    Parameters
    ----------
    fraction : float or ndarray
        Cloud cover [fraction of the sky], 0..1.

    Returns
    -------
    ndarray
        Cloud cover [oktas], whole numbers 0..8 (float, NaN where the fraction is NaN).
    """
    f = np.asarray(fraction, dtype=float)
    oktas = np.round(8.0 * f)
    oktas = np.where((f > 0.0) & (f < 1.0), np.clip(oktas, 1.0, 7.0), oktas)
    return oktas


def feet_from_metres(height_m) -> np.ndarray:
    """Heights [m] -> [ft] (1 ft = 0.3048 m exactly); NaN stays NaN.

    Parameters
    ----------
    height_m : float or ndarray
        Heights [m].

    Returns
    -------
    ndarray
        Heights [ft].
    """
    return np.asarray(height_m, dtype=float) / FOOT_M
