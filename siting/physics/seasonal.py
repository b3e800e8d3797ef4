"""Hour-by-hour emission weights from air temperature, and partial scrubbing.

Pure numpy. Two small models, both "common practice, no source" in their numbers (the shapes
are the usual ones for mechanically ventilated livestock houses; replace the parameters with
the house's own where known):

* Temperature-dependent emission: the house's hourly emission is proportional to
  exp(k (T - T_mean)), normalised so the mean weight over the record is 1 and the annual total
  equals the factor-based total. k = 0.05 per K (a doubling over ~14 K) by default.
* Ventilation: the air flow as a share of the house's maximum (summer) rate is r(T) =
  r_min below T_low, rising linearly to 1 at T_high and above.

Partial scrubbing: a scrubber sized for a share D of the maximum ventilation treats, in each
hour, min(r, D) of the maximum flow, i.e. a share min(r, D) / r of that hour's air and, with
the ammonia carried evenly in the exhaust air, of that hour's ammonia. Over the year the treated
share of ammonia is sum_h e_h min(r_h, D) / r_h / sum_h e_h, which is larger than D because most
hours run below the maximum. It equals D when the house always runs at maximum, and 1 when D = 1.
"""

from __future__ import annotations

import numpy as np

DEFAULT_EMISSION_COEFFICIENT_PER_K = 0.05  # common practice, no source
DEFAULT_MIN_VENTILATION_FRACTION = 0.1  # winter minimum rate / maximum rate; common practice
DEFAULT_RAMP_START_C = 10.0  # below: minimum ventilation; common practice, no source
DEFAULT_RAMP_END_C = 25.0  # above: maximum ventilation; common practice, no source


def temperature_emission_weights(
    temperature_c, coefficient_per_k: float = DEFAULT_EMISSION_COEFFICIENT_PER_K
) -> np.ndarray:
    """Hourly emission weights exp(k (T - mean T)), normalised to a mean of exactly 1 [-].

    Parameters
    ----------
    temperature_c : ndarray
        Hourly air temperature [deg C], finite.
    coefficient_per_k : float
        Relative change of emission per kelvin [K-1], >= 0; 0 gives a flat profile.

    Returns
    -------
    ndarray
        One weight per hour [-], mean 1.

    Raises
    ------
    ValueError
        If any temperature is not finite or the coefficient is negative.
    """
    t = np.asarray(temperature_c, dtype=float)
    if t.size == 0 or not np.isfinite(t).all():
        raise ValueError("temperature_c must be finite for every hour")
    if coefficient_per_k < 0:
        raise ValueError(f"coefficient_per_k must be >= 0, got {coefficient_per_k}")
    w = np.exp(coefficient_per_k * (t - t.mean()))
    return w / w.mean()


def ventilation_fraction(
    temperature_c,
    min_fraction: float = DEFAULT_MIN_VENTILATION_FRACTION,
    ramp_start_c: float = DEFAULT_RAMP_START_C,
    ramp_end_c: float = DEFAULT_RAMP_END_C,
) -> np.ndarray:
    """Ventilation rate as a share of the maximum rate, by outside temperature [-].

    r = min_fraction for T <= ramp_start_c, 1 for T >= ramp_end_c, linear between.

    Parameters
    ----------
    temperature_c : float or ndarray
        Outside air temperature [deg C].
    min_fraction : float
        Winter minimum rate / maximum rate, in (0, 1].
    ramp_start_c : float
        Temperature below which the minimum rate runs [deg C].
    ramp_end_c : float
        Temperature from which the maximum rate runs [deg C], above ``ramp_start_c``.

    Returns
    -------
    ndarray
        r in [min_fraction, 1], the shape of ``temperature_c``.

    Raises
    ------
    ValueError
        If ``min_fraction`` is outside (0, 1] or the ramp ends at or below its start.
    """
    if not 0 < min_fraction <= 1:
        raise ValueError(f"min_fraction must be in (0, 1], got {min_fraction}")
    if not ramp_end_c > ramp_start_c:
        raise ValueError("ramp_end_c must be above ramp_start_c")
    t = np.asarray(temperature_c, dtype=float)
    ramp = np.clip((t - ramp_start_c) / (ramp_end_c - ramp_start_c), 0.0, 1.0)
    return min_fraction + (1.0 - min_fraction) * ramp


def treated_ammonia_share(
    ventilation_fraction_of_max, design_share: float, emission_weights=None
) -> float:
    """Share of the year's ammonia passing a scrubber sized for ``design_share`` of max flow [-].

    Parameters
    ----------
    ventilation_fraction_of_max : ndarray
        Hourly ventilation rate / maximum rate, in (0, 1].
    design_share : float
        Scrubber capacity / maximum ventilation rate, in [0, 1].
    emission_weights : ndarray, optional
        Hourly emission weights (default equal): hours emitting more count more.

    Returns
    -------
    float
        sum_h e_h min(r_h, D) / r_h / sum_h e_h, in [0, 1].

    Raises
    ------
    ValueError
        If ``design_share`` is outside [0, 1] or a ventilation fraction outside (0, 1].
    """
    r = np.asarray(ventilation_fraction_of_max, dtype=float)
    if not 0.0 <= design_share <= 1.0:
        raise ValueError(f"design_share must be in 0..1, got {design_share}")
    if (r <= 0).any() or (r > 1).any():
        raise ValueError("ventilation fractions must be in (0, 1]")
    e = np.ones_like(r) if emission_weights is None else np.asarray(emission_weights, float)
    treated_hourly = np.minimum(r, design_share) / r
    return float((e * treated_hourly).sum() / e.sum())
