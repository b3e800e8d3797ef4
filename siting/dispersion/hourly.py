"""Long-term mean hour by hour: the mean over hours of each hour's off-axis Gaussian plume.

Pure numpy. Where ``longterm.py`` spreads each weather class evenly across a sector, this
module follows each hour's own wind direction: the hour's plume is the steady-state Gaussian
plume of ``plume.plume_concentration_g_m3`` (lateral spread sigma_y, not sector averaging), and
the annual mean at a receptor is the mean over the record's hours of that hour's concentration,
with an optional emission weight per hour (seasonal emission, partial scrubbing).

Identical hours (same direction, speed, stability) give identical plumes, so they are grouped
and their weights summed first: exact, and it saves most of the work on station records whose
directions and speeds are reported in steps. For each group only the receptors inside the
plume's angular window (where the lateral term is above exp(-18), |y| < 6 sigma_y) are
evaluated; outside it the hour contributes less than 2e-8 of its centre-line value.

Directions reported in steps (station records in 10 deg, say) stand for the interval they were
reported in: with ``HourlyWeather.direction_step_deg`` > 0 each hour's plume is spread evenly
over that interval (:func:`spread_lateral_density_per_m`), so a receptor between two reported
directions is not missed and one on a reported direction is not hit by every hour of it.

What is not here: reading records, stability from cloud and sun (``stability.py``), the
emission weights (``seasonal.py``).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from siting.dispersion.depletion import DepletionTables, table_position
from siting.dispersion.inputs import DispersionSettings, ReleaseElement
from siting.dispersion.release import release_wind_and_height, virtual_distances_m
from siting.dispersion.sector import receptor_reach_m
from siting.physics.deposition import source_depletion_fraction
from siting.physics.plume import vertical_term

N_STABILITY = 6
LATERAL_CUTOFF_SIGMAS = 6.0
_SQRT_2PI = np.sqrt(2.0 * np.pi)
#: below this half-width of the interval in sigma_y units, w = L Delta / (2 sy), the spread
#: density equals the Gaussian to 1 + O(w^2) = 1 + 1e-8, and the difference of two normal
#: CDFs would lose digits: the Gaussian itself is used (our choice)
_SPREAD_MIN_HALF_WIDTH = 1e-4


@dataclass(frozen=True)
class HourlyWeather:
    """An hourly weather record ready for dispersion (valid hours only).

    Attributes
    ----------
    time_utc : ndarray of datetime64[s]
        Hour time stamps (UTC), increasing.
    direction_deg : ndarray
        Direction the wind blows FROM [deg clockwise from north], 0 <= d < 360.
    speed_m_s : ndarray
        Wind speed at the anemometer height [m s-1], > 0 (calms already handled).
    stability_index : ndarray of int
        Pasquill class 0..5 = A..F.
    temperature_c : ndarray
        Air temperature [deg C]; NaN where not given.
    anemometer_height_m : float
        Height of the wind measurement [m], > 0.
    direction_step_deg : float
        Interval the directions were reported in [deg], 0..45: each hour's plume is spread
        evenly over +-step/2 of its direction (:func:`spread_lateral_density_per_m`). 0 means
        exact directions (no spreading).
    calendar_year : ndarray of int, optional
        Each hour's calendar year as its source writes it (local time where the source is
        local), for per-year tables and the worst single year; None: the UTC year.
    """

    time_utc: np.ndarray
    direction_deg: np.ndarray
    speed_m_s: np.ndarray
    stability_index: np.ndarray
    temperature_c: np.ndarray
    anemometer_height_m: float = 10.0
    direction_step_deg: float = 0.0
    calendar_year: np.ndarray | None = None

    @property
    def n_hours(self) -> int:
        """Number of hours in the record (after missing hours are left out)."""
        return int(self.direction_deg.size)

    @property
    def years(self) -> np.ndarray:
        """Each hour's calendar year (``calendar_year``, else the UTC year)."""
        if self.calendar_year is not None:
            return np.asarray(self.calendar_year, dtype=int)
        return np.asarray(self.time_utc, dtype="datetime64[Y]").astype(int) + 1970

    def of_year(self, year: int) -> HourlyWeather:
        """The hours of one calendar year (``years``), as a record of their own.

        Parameters
        ----------
        year : int
            The calendar year.

        Returns
        -------
        HourlyWeather
            Its hours (none if the record has no hour of that year).
        """
        mine = self.years == int(year)
        return HourlyWeather(
            self.time_utc[mine],
            self.direction_deg[mine],
            self.speed_m_s[mine],
            self.stability_index[mine],
            self.temperature_c[mine],
            self.anemometer_height_m,
            self.direction_step_deg,
            None if self.calendar_year is None else self.calendar_year[mine],
        )


def group_identical_hours(weather: HourlyWeather, hour_weights=None):
    """Unique (direction, speed, stability) hours and the summed weight of each group.

    Directions are compared to 0.01 deg and speeds to 0.001 m/s.

    Parameters
    ----------
    weather : HourlyWeather
        The hours.
    hour_weights : ndarray, optional
        Weight of each hour [-] (emission weights); None weighs every hour 1.

    Returns
    -------
    direction_deg, speed_m_s : ndarray
        Each group's direction [deg, from north] and speed [m s-1].
    stability_index : ndarray of int
        Each group's Pasquill class, 0..5 for A..F.
    weight : ndarray
        The summed weight of each group's hours [-].
    """
    weights = np.ones(weather.n_hours) if hour_weights is None else np.asarray(hour_weights, float)
    key = np.stack(
        [
            np.round(weather.direction_deg, 2),
            np.round(weather.speed_m_s, 3),
            weather.stability_index.astype(float),
        ],
        axis=1,
    )
    unique, inverse = np.unique(key, axis=0, return_inverse=True)
    summed = np.bincount(inverse.ravel(), weights=weights, minlength=len(unique))
    return unique[:, 0], unique[:, 1], unique[:, 2].astype(int), summed


def spread_lateral_density_per_m(cross_m, along_m, sigma_y_m, step_rad: float):
    """Lateral Gaussian density averaged over wind directions uniform within +-step/2 [m-1].

    Parameters
    ----------
    cross_m : ndarray
        Crosswind distance of the receptor from the reported direction's axis [m].
    along_m : ndarray
        Along-wind distance of the receptor [m], > 0 (the lever arm of a turn of direction).
    sigma_y_m : ndarray
        Lateral spread at the along-wind distance [m], > 0.
    step_rad : float
        Width Delta of the reporting interval [rad], >= 0.

    Returns
    -------
    density_per_m : ndarray
        Broadcast shape of the inputs [m-1]; the Gaussian exp(-y^2 / 2 sy^2) / (sqrt(2 pi) sy)
        itself where Delta = 0. Symmetric in cross_m, never negative.

    Notes
    -----
    A wind turned by a small angle t from the reported direction moves the receptor's
    crosswind coordinate from y to y - x t (x the along-wind distance: the first-order term of
    r sin(psi - t)); sigma_y and sigma_z stay at x. Averaging the Gaussian over t uniform in
    [-Delta/2, Delta/2] gives

        [Phi((y + x Delta/2) / sy) - Phi((y - x Delta/2) / sy)] / (x Delta),

    Phi the standard normal CDF: the angular form [Phi((psi + Delta/2) r / sy) -
    Phi((psi - Delta/2) r / sy)] / (Delta r) in the small-angle limit (y = r psi, x = r). It
    tends to the Gaussian as Delta -> 0 (Phi' = the normal density), and it conserves mass: in
    the small-angle limit the integral over psi of r times the density is 1, as for the
    Gaussian, so spreading moves the plume sideways but neither adds nor loses any. The
    approximation is that of the Gaussian plume's own crosswind coordinate, second order in
    Delta (x Delta^2 / 8 in y, < 1 m at 1.5 km and 10 deg near the axis). The tails are
    computed on the far side, Phi(-a) - Phi(-b), so no digits are lost there.
    """
    cross = np.abs(np.asarray(cross_m, dtype=float))
    sy = np.asarray(sigma_y_m, dtype=float)
    gaussian = np.exp(-0.5 * (cross / sy) ** 2) / (_SQRT_2PI * sy)
    if step_rad <= 0:
        return gaussian
    # Imported here, not at the top: scipy.special costs 0.1-0.4 s to import, and a run on a
    # frequency table (the demo) imports this module without ever spreading an hour. numpy has
    # no vectorised erfc, and scipy's ndtr keeps the hourly results as they were.
    from scipy.special import ndtr

    half_width = 0.5 * np.asarray(along_m, dtype=float) * step_rad / sy  # w = x Delta / 2 sy
    centre = cross / sy
    with np.errstate(divide="ignore", invalid="ignore"):
        spread = (ndtr(half_width - centre) - ndtr(-centre - half_width)) / (2.0 * half_width * sy)
    return np.where(half_width > _SPREAD_MIN_HALF_WIDTH, spread, gaussian)


def _half_window_rad(scheme, s: int, xy_m: float, max_distance_m: float) -> float:
    """Largest angle off the plume axis where |y| < 6 sigma_y, over distances up to max."""
    x = np.geomspace(0.5, max(max_distance_m, 1.0), 200)
    ratio = LATERAL_CUTOFF_SIGMAS * scheme.sigma_y_m(x + xy_m, s) / x
    return float(np.arctan(ratio.max())) if ratio.max() < 1e6 else np.pi


def element_hourly_mean_g_m3_per_g_s(
    receptor_x_m,
    receptor_y_m,
    element: ReleaseElement,
    weather: HourlyWeather,
    settings: DispersionSettings,
    hour_weights=None,
) -> np.ndarray:
    """Mean over the record's hours of one element's ground-level concentration [g m-3 per g s-1].

    Parameters
    ----------
    receptor_x_m, receptor_y_m : ndarray
        Receptor coordinates [m], same projected CRS as the element.
    element : ReleaseElement
        The release element (share_fraction not applied here).
    weather : HourlyWeather
        The record (valid hours only).
    settings : DispersionSettings
        Sigma scheme, wind exponents, lid, depletion velocity.
    hour_weights : ndarray, optional
        Emission multiplier of each hour [-]; the emission of hour h is Q w_h. Default 1.

    Returns
    -------
    concentration : ndarray
        Same shape as the receptors [g m-3 per g s-1]: sum_h w_h C_h / n_hours. Upwind
        receptors get zero from that hour; never negative, finite everywhere.

    Notes
    -----
    C_h = Q / (2 pi u sy sz) exp(-y^2 / 2 sy^2) V, [Turner1970] Eq. 3.1, with the source
    depletion factor of ``deposition.source_depletion_fraction`` when switched on. With
    ``weather.direction_step_deg`` > 0 the lateral factor exp(-y^2 / 2 sy^2) / (sqrt(2 pi) sy)
    is replaced by its average over the hour's reporting interval,
    :func:`spread_lateral_density_per_m`, and the angular window is widened by half the step.
    """
    rx = np.asarray(receptor_x_m, dtype=float).ravel()
    ry = np.asarray(receptor_y_m, dtype=float).ravel()
    chunk = settings.chunk_receptors
    reach_m = receptor_reach_m(rx, ry, element)
    if rx.size > chunk:  # bounded memory: receptors in chunks (each sorted by bearing)
        out = np.concatenate(
            [
                _element_hourly_chunk(
                    rx[a : a + chunk],
                    ry[a : a + chunk],
                    element,
                    weather,
                    settings,
                    hour_weights,
                    reach_m,
                )
                for a in range(0, rx.size, chunk)
            ]
        )
    else:
        out = _element_hourly_chunk(rx, ry, element, weather, settings, hour_weights, reach_m)
    return out.reshape(np.shape(receptor_x_m))


def _element_hourly_chunk(
    rx,
    ry,
    element: ReleaseElement,
    weather: HourlyWeather,
    settings: DispersionSettings,
    hour_weights,
    max_distance_m: float,
) -> np.ndarray:
    dx, dy = rx - element.x_m, ry - element.y_m
    distance_m = np.hypot(dx, dy)
    bearing_rad = np.arctan2(dx, dy)  # source -> receptor, clockwise from north
    order = np.argsort(bearing_rad)
    sorted_bearing = bearing_rad[order]
    total = np.zeros(rx.size)
    if rx.size == 0 or weather.n_hours == 0:
        return total
    scheme = settings.scheme
    step_rad = np.deg2rad(float(weather.direction_step_deg))
    directions, speeds, classes, weights = group_identical_hours(weather, hour_weights)
    for s in range(N_STABILITY):
        in_class = classes == s
        if not in_class.any():
            continue
        xy_m, xz_m = virtual_distances_m(element, scheme, s)
        # spread over +-step/2: 6 sigma_y beyond the interval's edges (tan(a + b) >= tan a + b,
        # so beyond it |y| - x step/2 > 6 sigma_y, and the density is below its 6-sigma value)
        half_window = min(_half_window_rad(scheme, s, xy_m, max_distance_m) + 0.5 * step_rad, np.pi)
        # receptors near the element are reached by every plume whatever the angle: upwind
        # ones closer than min_distance count as downwind at it, with their crosswind offset
        near_m = element.min_distance_m + LATERAL_CUTOFF_SIGMAS * float(
            scheme.sigma_y_m(element.min_distance_m + xy_m, s)
        )
        near = np.flatnonzero(distance_m < near_m)

        def sigma_z_of(x, s=s, xz_m=xz_m):
            return scheme.sigma_z_m(x + xz_m, s)

        depletion = DepletionTables(sigma_z_of, settings, max_distance_m)
        class_dirs, class_speeds = directions[in_class], speeds[in_class]
        class_weights = weights[in_class]
        for direction in np.unique(class_dirs):
            same = (class_dirs == direction) & (class_weights != 0)
            if not same.any():
                continue
            travel_rad = np.deg2rad(direction + 180.0)
            travel_rad = (travel_rad + np.pi) % (2 * np.pi) - np.pi  # into [-pi, pi)
            idx = _window_indices(sorted_bearing, travel_rad, half_window)
            sel = order[idx]
            if near.size:  # add the near receptors the angular window left out
                off = np.abs((bearing_rad[near] - travel_rad + np.pi) % (2 * np.pi) - np.pi)
                sel = np.concatenate([sel, near[off > half_window]])
            if sel.size == 0:
                continue
            off_axis = bearing_rad[sel] - travel_rad
            along_m = distance_m[sel] * np.cos(off_axis)
            cross_m = distance_m[sel] * np.sin(off_axis)
            downwind = along_m > -element.min_distance_m
            if not downwind.any():
                continue
            sel, along_m, cross_m = sel[downwind], along_m[downwind], cross_m[downwind]
            along_m = np.maximum(along_m, element.min_distance_m)
            # the geometry of this direction and class is shared by all its speeds: only the
            # wind (and with plume rise, the height) and the depletion depend on the speed
            sy = np.maximum(scheme.sigma_y_m(along_m + xy_m, s), 1e-6)
            sz = np.maximum(sigma_z_of(along_m), 1e-6)
            if step_rad > 0:  # spread over the reporting interval
                shape = spread_lateral_density_per_m(cross_m, along_m, sy, step_rad) / (
                    _SQRT_2PI * sz
                )
            else:  # exact directions: the Gaussian, [Turner1970] Eq. 3.1
                shape = np.exp(-0.5 * (cross_m / sy) ** 2) / (2.0 * np.pi * sy * sz)
            by_height: dict[float, list[tuple[float, float]]] = {}
            for speed_ref, weight in zip(class_speeds[same], class_weights[same]):
                u, height_m = release_wind_and_height(
                    element,
                    speed_ref,
                    weather.anemometer_height_m,
                    settings.wind_exponents[s],
                    s,
                    settings,
                )
                by_height.setdefault(height_m, []).append((u, weight))
            c = np.zeros(along_m.size)
            position = (
                table_position(along_m, max_distance_m, settings.depletion_table_points)
                if settings.depletion_velocity_m_s
                else None
            )  # shared by the heights
            for height_m, winds in by_height.items():
                vertical = vertical_term(sz, height_m, 0.0, settings.mixing_height_m)
                integral = depletion.integral(height_m, along_m, position)
                speed_sum = np.zeros(along_m.size)
                for u, weight in winds:
                    if integral is None:
                        speed_sum += weight / u
                    else:
                        speed_sum += (
                            weight
                            / u
                            * source_depletion_fraction(
                                settings.depletion_velocity_m_s, u, integral
                            )
                        )
                c += vertical * speed_sum
            total[sel] += shape * c
    return total / weather.n_hours


def _window_indices(sorted_bearing: np.ndarray, centre_rad: float, half_rad: float) -> np.ndarray:
    """Indices into sorted bearings within +-half of centre, wrapping at +-pi."""
    if half_rad >= np.pi:
        return np.arange(sorted_bearing.size)
    lo, hi = centre_rad - half_rad, centre_rad + half_rad
    parts = []
    for a, b in ((lo, hi), (lo + 2 * np.pi, hi + 2 * np.pi), (lo - 2 * np.pi, hi - 2 * np.pi)):
        i0, i1 = np.searchsorted(sorted_bearing, [a, b])
        if i1 > i0:
            parts.append(np.arange(i0, i1))
    return np.concatenate(parts) if parts else np.empty(0, dtype=np.intp)


def source_hourly_mean_g_m3_per_g_s(
    receptor_x_m,
    receptor_y_m,
    elements: list[ReleaseElement],
    weather: HourlyWeather,
    settings: DispersionSettings,
    hour_weights=None,
) -> np.ndarray:
    """Hour-by-hour mean per unit (mean) emission of a source made of elements.

    Parameters
    ----------
    receptor_x_m, receptor_y_m : ndarray
        Receptor coordinates [m].
    elements : list of ReleaseElement
        The source's elements; each carries its share of the emission.
    weather : HourlyWeather
        The hours.
    settings : DispersionSettings
        Dispersion settings.
    hour_weights : ndarray, optional
        Emission weight of each hour [-], mean 1; None: every hour emits alike.

    Returns
    -------
    ndarray
        Annual mean concentration per unit emission [g m-3 per g s-1], the receptors' shape.
    """
    total = np.zeros(np.shape(receptor_x_m), dtype=float)
    for element in elements:
        total += element.share_fraction * element_hourly_mean_g_m3_per_g_s(
            receptor_x_m, receptor_y_m, element, weather, settings, hour_weights
        )
    return total
