"""Plume depletion integrals I(x) on log-spaced distance tables, cached by release height.

Pure numpy. A depletion table holds distance 0, then nodes log-spaced from 1 cm to just past
the farthest receptor (:func:`depletion_table_m`); a distance's place in it is computed, not
searched for (:func:`table_position`); :func:`depletion_integral_table` fills I(x) for one
stability class and height, and :class:`DepletionTables` caches them per height and turns them
into the share of the emission still airborne. The hourly engine (``hourly.py``) reads them;
the sector engine (``sector.py``) integrates on its own profile nodes from the same 1 cm start.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from siting.dispersion.inputs import DispersionSettings
from siting.physics.deposition import (
    cumulative_depletion_integral_m0,
    ground_vertical_density_per_m,
    source_depletion_fraction,
)

#: Nearest non-zero distance of a depletion table [m] (1 cm); the sector engine's depletion
#: integral starts there too.
TABLE_START_M = 0.01


def depletion_table_m(max_distance_m: float, n_points: int) -> np.ndarray:
    """Distances of a depletion table [m]: 0, then log-spaced from 1 cm to just past max.

    Parameters
    ----------
    max_distance_m : float
        Farthest distance the table must span [m].
    n_points : int
        Log-spaced nodes after the leading 0.

    Returns
    -------
    ndarray, (n_points + 1,)
        Distances [m], increasing.
    """
    return np.concatenate(
        ([0.0], np.geomspace(TABLE_START_M, max(max_distance_m, 1.0) * 1.01, n_points))
    )


def table_position(distance_m, max_distance_m: float, n_points: int):
    """Index and weight of each distance in the table of :func:`depletion_table_m`.

    The table is log-spaced, so the position is computed, not searched for: the same linear
    interpolation as np.interp, without its binary search.

    Parameters
    ----------
    distance_m : float or ndarray
        Distances [m], >= 0.
    max_distance_m, n_points : float, int
        As given to :func:`depletion_table_m`.

    Returns
    -------
    i0 : ndarray of int
        Node below each distance.
    weight : ndarray
        Weight of node i0 + 1 [-], in [0, 1].
    """
    x = np.asarray(distance_m, dtype=float)
    end = max(max_distance_m, 1.0) * 1.01
    step = np.log(end / TABLE_START_M) / (n_points - 1)
    with np.errstate(divide="ignore"):
        f = np.log(np.maximum(x, TABLE_START_M) / TABLE_START_M) / step
    i0 = np.clip(np.floor(f).astype(np.intp), 0, n_points - 2) + 1  # +1: the leading 0
    node = TABLE_START_M * np.exp((i0 - 1) * step)
    node_next = TABLE_START_M * np.exp(i0 * step)
    weight = np.clip((x - node) / (node_next - node), 0.0, 1.0)
    below = x < TABLE_START_M  # between the leading 0 and 1 cm
    i0 = np.where(below, 0, i0)
    weight = np.where(below, x / TABLE_START_M, weight)
    return i0, weight


def depletion_integral_table(
    sigma_z_of: Callable,
    release_height_m: float,
    mixing_height_m,
    max_distance_m: float,
    n_points: int,
):
    """Distance table [m] and I(x) for one stability class and effective height.

    Parameters
    ----------
    sigma_z_of : callable
        sigma_z [m] of distance [m] for the class (virtual distance included).
    release_height_m : float
        Effective release height [m].
    mixing_height_m : float or None
        Height of a reflecting lid [m]; None for none.
    max_distance_m : float
        Farthest distance the table must span [m].
    n_points : int
        Log-spaced nodes (:func:`depletion_table_m`).

    Returns
    -------
    distance_m : ndarray
        The table's distances [m].
    integral : ndarray
        I(x) at those distances [-] (:func:`siting.physics.deposition.cumulative_depletion_integral_m0`).
    """
    table_m = depletion_table_m(max_distance_m, n_points)
    density = ground_vertical_density_per_m(
        np.maximum(sigma_z_of(table_m), 1e-6), release_height_m, mixing_height_m
    )
    return table_m, cumulative_depletion_integral_m0(table_m, density)


class DepletionTables:
    """Depletion integrals I(x) of one element and stability class, cached by release height.

    Parameters
    ----------
    sigma_z_of : callable
        sigma_z [m] of distance [m] for the class (virtual distance included).
    settings : DispersionSettings
        The depletion velocity (None: no depletion), lid and table size.
    max_distance_m : float
        Farthest receptor distance the tables must span [m].
    """

    def __init__(self, sigma_z_of: Callable, settings: DispersionSettings, max_distance_m: float):
        self._sigma_z_of = sigma_z_of
        self._settings = settings
        self._max_distance_m = max_distance_m
        self._tables: dict[float, tuple[np.ndarray, np.ndarray]] = {}

    def integral(self, height_m: float, distance_m, position=None) -> np.ndarray | None:
        """I(x) at the distances for a release height [-]; None without depletion.

        Parameters
        ----------
        height_m : float
            Effective release height [m] (tables are cached by it, to 1e-6 m).
        distance_m : ndarray
            Receptor distances [m].
        position : tuple of ndarray, optional
            ``table_position(distance_m, ...)`` when the caller has it already.

        Returns
        -------
        ndarray or None
            I(x) [-], the shape of ``distance_m``; None when depletion is off.
        """
        if not self._settings.depletion_velocity_m_s:
            return None
        key = round(height_m, 6)
        if key not in self._tables:
            self._tables[key] = depletion_integral_table(
                self._sigma_z_of,
                height_m,
                self._settings.mixing_height_m,
                self._max_distance_m,
                self._settings.depletion_table_points,
            )
        _, integral = self._tables[key]
        i0, weight = (
            position
            if position is not None
            else table_position(
                distance_m, self._max_distance_m, self._settings.depletion_table_points
            )
        )
        return integral[i0] + weight * (integral[i0 + 1] - integral[i0])

    def fraction(self, height_m: float, wind_speed_m_s: float, distance_m) -> np.ndarray:
        """Share of the emission still airborne at the distances [-] (1 without depletion).

        Parameters
        ----------
        height_m : float
            Effective release height [m].
        wind_speed_m_s : float
            Wind speed carrying the plume [m s-1], > 0.
        distance_m : ndarray
            Receptor distances [m].

        Returns
        -------
        ndarray
            Q(x) / Q0 in (0, 1], the shape of ``distance_m``.
        """
        integral = self.integral(height_m, distance_m)
        if integral is None:
            return np.ones_like(np.asarray(distance_m, dtype=float))
        return source_depletion_fraction(
            self._settings.depletion_velocity_m_s, wind_speed_m_s, integral
        )
