"""Assessment arithmetic: per-site statistics, % of critical level and load, verdicts.

Pure functions on numpy arrays; no files, no geometry. A site's figures come from its receptor
points: the maximum over all of them (boundary points nearest the sources, interior lattice,
grid nodes inside) and the mean over its interior points.
"""

from __future__ import annotations

import numpy as np

VERDICT_BELOW = "below threshold"
VERDICT_ABOVE = "above threshold"
VERDICT_NOT_ASSESSED = "not assessed"


def site_max_and_mean(values, site_index, interior, n_sites: int):
    """Per-site maximum over all points and mean over interior points of a receptor field.

    Parameters
    ----------
    values : ndarray, (n_points,)
        Field at the site receptor points (any unit).
    site_index : ndarray of int, (n_points,)
        Site of each point, 0..n_sites-1.
    interior : ndarray of bool, (n_points,)
        Points that sample the interior evenly (used for the mean).
    n_sites : int

    Returns
    -------
    maximum, mean : ndarray, (n_sites,)
        NaN for a site with no points.
    """
    values = np.asarray(values, dtype=float)
    maximum = np.full(n_sites, -np.inf)
    np.maximum.at(maximum, site_index, values)
    maximum[np.isinf(maximum)] = np.nan
    total = np.bincount(site_index[interior], weights=values[interior], minlength=n_sites)
    count = np.bincount(site_index[interior], minlength=n_sites)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = np.where(count > 0, total / np.maximum(count, 1), np.nan)
    return maximum, mean


def percent_of(value, critical):
    """Share of a critical level or load [%]: 100 x value / critical.

    Parameters
    ----------
    value : float or ndarray
        Process contribution, in the unit of ``critical`` (ug m-3 or kg N ha-1 yr-1).
    critical : float or ndarray
        Critical level or load in the same unit, > 0.

    Returns
    -------
    ndarray
        100 x value / critical [%], broadcast shape of the inputs.
    """
    return 100.0 * np.asarray(value, dtype=float) / np.asarray(critical, dtype=float)


def verdict(pct_of_level, pct_of_load, threshold_percent, assessed=True):
    """'below threshold' when both shares are at or under the threshold, else 'above threshold'.

    Parameters
    ----------
    pct_of_level : float or ndarray
        Process contribution as a share of the critical level [%].
    pct_of_load : float or ndarray
        Process contribution as a share of the critical load [%].
    threshold_percent : float or ndarray
        The site's screening threshold [%].
    assessed : bool or ndarray of bool
        False where a site could not be assessed (it gets 'not assessed').

    Returns
    -------
    ndarray of object
        One of ``VERDICT_BELOW``, ``VERDICT_ABOVE``, ``VERDICT_NOT_ASSESSED`` per site.
    """
    pct_of_level = np.atleast_1d(pct_of_level)
    pct_of_load = np.atleast_1d(pct_of_load)
    worst = np.maximum(pct_of_level, pct_of_load)
    out = np.where(worst <= threshold_percent, VERDICT_BELOW, VERDICT_ABOVE).astype(object)
    out[~np.broadcast_to(np.asarray(assessed, dtype=bool), out.shape)] = VERDICT_NOT_ASSESSED
    return out
