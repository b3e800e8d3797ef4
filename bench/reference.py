"""Straightforward reference implementations of the two long-term engines (benchmarks, tests).

Written from the formulas, not from ``siting/longterm.py`` or ``siting/hourly.py``: only the pure
formulas of ``siting.physics.plume`` are used (the sigma scheme, the wind profile, momentum rise, the
vertical term, the virtual distance and the hourly plume). Plain vectorised numpy, one source at
a time, no grouping, no windows, no caches beyond the obvious:

- :func:`reference_sector_average` loops over every (speed, stability) pair with a non-zero
  frequency and evaluates the plume's vertical term (and depletion) once on ALL receptors; each
  receptor then takes the frequencies of the two sectors whose centre lines bracket its bearing,
  weighted by a triangle in angle (1 on a centre line, falling linearly to 0 on the
  neighbouring ones, so between two centre lines the value is the linear interpolation
  longterm.py documents). This is the plain implementation: no sector's work is repeated, and
  no sector that cannot reach a receptor is evaluated there.
- :func:`reference_hourly` loops over every hour of the record and evaluates that hour's
  off-axis Gaussian plume (``plume.plume_concentration_g_m3``, [Turner1970] Eq. 3.1) on ALL
  receptors, zero upwind; no lateral cut-off. With a direction step (directions reported in
  steps), the lateral Gaussian is replaced by its average over the reporting interval, written
  out here from its closed form (see :func:`reference_hourly`).

Source depletion in both is Q(x)/Q0 = exp(-(v_d / u) int_0^x g dx'), g = V(z=0) / (sqrt(2 pi) sz)
([Chamberlain1953], [VanderHoven1968]), with the integral computed directly: 5-point Gauss-Legendre
on a fine geometric lattice (4,000 nodes), plus a midpoint panel from the last node to each
receptor's own distance (no table lookup, no interpolation). The integral depends on the
stability class and the effective height only, so it is built once per (element, class, height);
the sector average evaluates it once at the receptors' distances, the hourly reference at each
hour's along-wind distances.

What is not here: anything faster. These are the yardsticks ``bench/bench_runs.py`` times the
engines against and ``tests/test_fast_paths.py`` checks them with; they are not part of the
package.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from scipy.special import erf

from siting.physics.plume import (
    momentum_plume_rise_m,
    plume_concentration_g_m3,
    stack_tip_downwash_height_m,
    vertical_term,
    virtual_distance_m,
    wind_speed_at_height_m_s,
)

N_STABILITY = 6
_SQRT_2PI = np.sqrt(2.0 * np.pi)
#: Gauss-Legendre nodes and weights on [-1, 1]: 5 points for the lattice panels (exact to
#: degree 9), 1 (the midpoint) for each receptor's last panel, at most 0.3 % of its distance
#: wide. Measured on the Briggs rural classes, heights 3-10 m, up to 3 km: I(x) agrees with a
#: 4x finer lattice to 1e-12 and the midpoint panel adds at most 2e-7 to I (I up to ~180), so
#: the depletion fraction exp(-(v_d / u) I) is right to ~1e-8 for v_d / u <= 0.04.
_GL5 = np.polynomial.legendre.leggauss(5)
_GL1 = np.polynomial.legendre.leggauss(1)


def _elements(source) -> list:
    """The release elements of a source given as one element or a sequence of elements."""
    return list(source) if isinstance(source, (list, tuple)) else [source]


def _emissions(sources: Sequence, emission_g_s) -> np.ndarray:
    if emission_g_s is None:
        return np.ones(len(sources))
    emission_g_s = np.asarray(emission_g_s, dtype=float)
    if emission_g_s.shape != (len(sources),):
        raise ValueError(
            f"emission_g_s must have one value per source ({len(sources)}), "
            f"got shape {emission_g_s.shape}"
        )
    return emission_g_s


def _wind_and_height(
    element, speed_ref_m_s: float, anemometer_height_m: float, exponent: float, s: int, settings
) -> tuple[float, float]:
    """Wind at release height [m s-1] (power law, the settings' rule below the anemometer)
    and release height after stack-tip downwash, plus momentum rise where allowed [m]."""
    u = float(
        wind_speed_at_height_m_s(
            speed_ref_m_s,
            anemometer_height_m,
            element.release_height_m,
            exponent,
            settings.wind_below_anemometer,
            settings.wind_profile_min_height_m,
            settings.min_wind_speed_m_s,
        )
    )
    height_m = float(element.release_height_m)
    if element.diameter_m > 0 and element.stack_tip_downwash:
        height_m = float(
            stack_tip_downwash_height_m(height_m, element.diameter_m, element.exit_velocity_m_s, u)
        )
    if element.plume_rise and element.exit_velocity_m_s > 0 and element.diameter_m > 0:
        height_m += float(
            momentum_plume_rise_m(element.diameter_m, element.exit_velocity_m_s, u, s)
        )
    return u, height_m


class DirectDepletionIntegral:
    """I(x) = int_0^x g(x') dx' of one vertical profile, integrated directly [-].

    g(x) = V(sz(x), H) / (sqrt(2 pi) sz(x)) is the ground-level share of the crosswind-integrated
    plume per metre of height. The running integral is accumulated panel by panel with 5-point
    Gauss-Legendre on 0, then ``n_nodes`` geometric nodes from 1 mm to ``max_distance_m``; each
    receptor then adds one midpoint-rule panel from the node below it to its own distance.
    """

    def __init__(
        self,
        sigma_z_of,
        height_m: float,
        mixing_height_m,
        max_distance_m: float,
        n_nodes: int = 4000,
    ):
        self._sigma_z_of = sigma_z_of
        self._height_m = height_m
        self._mixing_height_m = mixing_height_m
        self.nodes_m = np.concatenate(
            ([0.0], np.geomspace(1e-3, max(float(max_distance_m), 1.0) * 1.001, n_nodes))
        )
        panels = self._panel_integral(self.nodes_m[:-1], self.nodes_m[1:], _GL5)
        self.cumulative = np.concatenate(([0.0], np.cumsum(panels)))

    def density_per_m(self, distance_m):
        sz = np.maximum(self._sigma_z_of(distance_m), 1e-6)
        return vertical_term(sz, self._height_m, 0.0, self._mixing_height_m) / (_SQRT_2PI * sz)

    def _panel_integral(self, a, b, rule):
        nodes, weights = rule
        half = 0.5 * (b - a)
        mid = 0.5 * (b + a)
        x = mid[..., None] + half[..., None] * nodes
        return half * (self.density_per_m(x) @ weights)

    def __call__(self, distance_m):
        x = np.asarray(distance_m, dtype=float)
        k = np.clip(np.searchsorted(self.nodes_m, x, side="right") - 1, 0, self.nodes_m.size - 1)
        return self.cumulative[k] + self._panel_integral(self.nodes_m[k], x, _GL1)


def _depletion(cache: dict, key, sigma_z_of, height_m, settings, max_distance_m):
    """The cached direct integral of one (class, height), or None without depletion."""
    if not settings.depletion_velocity_m_s:
        return None
    if key not in cache:
        cache[key] = DirectDepletionIntegral(
            sigma_z_of, height_m, settings.mixing_height_m, max_distance_m
        )
    return cache[key]


def _sector_weights(dx_m, dy_m, sector_centres_deg) -> np.ndarray:
    """Angular weight of each sector at each receptor, shape (n_sectors, n_receptors) [-].

    A triangle in angle: 1 where the receptor lies on the sector's centre line (downwind of it),
    0 from the neighbouring centre lines outwards; the weights of a receptor sum to 1.
    """
    n = len(sector_centres_deg)
    width_deg = 360.0 / n
    wind_from_deg = (np.degrees(np.arctan2(dx_m, dy_m)) + 180.0) % 360.0
    pos = (wind_from_deg - sector_centres_deg[0]) / width_deg  # in sector widths
    offset = np.arange(n)[:, None]
    apart = np.abs((pos[None, :] - offset + n / 2.0) % n - n / 2.0)
    return np.maximum(1.0 - apart, 0.0)


def _neighbour_sectors(dx_m, dy_m, sector_centres_deg):
    """The two sectors whose centre lines bracket each receptor's bearing, and their weights.

    Returns (k0, k1, w0, w1): sector indices and weights (w0 + w1 = 1), the only non-zero
    entries of :func:`_sector_weights` for each receptor.
    """
    n = len(sector_centres_deg)
    wind_from_deg = (np.degrees(np.arctan2(dx_m, dy_m)) + 180.0) % 360.0
    pos = ((wind_from_deg - sector_centres_deg[0]) / (360.0 / n)) % n  # in sector widths
    k0 = np.floor(pos).astype(int) % n
    w1 = pos - np.floor(pos)
    return k0, (k0 + 1) % n, 1.0 - w1, w1


def reference_sector_average(
    receptor_x, receptor_y, sources: Sequence, weather, settings, emission_g_s=None
) -> np.ndarray:
    """Annual mean sector-averaged concentration of several sources, the plain way [g m-3].

    Parameters
    ----------
    receptor_x, receptor_y : ndarray
        Receptor coordinates [m], projected, same CRS as the sources.
    sources : sequence
        Each source a ``ReleaseElement`` or a list of them (their ``share_fraction`` applied).
    weather : WeatherClasses
        Sector centres [deg], class speeds [m s-1], frequencies (sector, speed, stability),
        anemometer height [m].
    settings : DispersionSettings
        Sigma scheme, wind exponents, mixing height [m] or None, depletion velocity [m s-1]
        or None.
    emission_g_s : ndarray, optional
        Emission of each source [g s-1]; default 1 each.

    Returns
    -------
    concentration_g_m3 : ndarray
        Same shape as the receptors: sum over sources of Q times the per-unit concentration.

    Notes
    -----
    Per class: C = f w_k Q V / (sqrt(2 pi) u sz dtheta x) ([Turner1970] Ch. 10), x the receptor's
    distance (at least the element's min_distance_m), sz at x plus the vertical virtual distance
    of a volume element, times the depletion fraction at x.
    """
    rx = np.asarray(receptor_x, dtype=float).ravel()
    ry = np.asarray(receptor_y, dtype=float).ravel()
    emissions = _emissions(sources, emission_g_s)
    freq = np.asarray(weather.frequency_fraction, dtype=float)
    centres = np.asarray(weather.sector_centres_deg, dtype=float)
    width_rad = 2.0 * np.pi / len(centres)
    scheme = settings.scheme
    total = np.zeros(rx.size)
    for source, q in zip(sources, emissions):
        for element in _elements(source):
            dx, dy = rx - element.x_m, ry - element.y_m
            x = np.maximum(np.hypot(dx, dy), element.min_distance_m)
            k0, k1, w0, w1 = _neighbour_sectors(dx, dy, centres)
            scale = q * element.share_fraction
            for s in range(N_STABILITY):
                if not freq[:, :, s].any():
                    continue
                xz = virtual_distance_m(element.sigma_z0_m, lambda d, s=s: scheme.sigma_z_m(d, s))

                def sigma_z_of(d, s=s, xz=xz):
                    return scheme.sigma_z_m(d + xz, s)

                sz = np.maximum(sigma_z_of(x), 1e-6)
                integral_at_x: dict = {}  # I(x) at the receptors, by effective height
                for j, speed_ref in enumerate(weather.speeds_m_s):
                    u, height_m = _wind_and_height(
                        element,
                        speed_ref,
                        weather.anemometer_height_m,
                        settings.wind_exponents[s],
                        s,
                        settings,
                    )
                    key = round(height_m, 9)
                    if settings.depletion_velocity_m_s and key not in integral_at_x:
                        integral_at_x[key] = DirectDepletionIntegral(
                            sigma_z_of, height_m, settings.mixing_height_m, x.max()
                        )(x)
                    f = freq[:, j, s]
                    if not f.any():
                        continue
                    # the vertical term and the depletion do not depend on the sector: once per
                    # (stability, speed) on every receptor; each receptor then takes the two
                    # sectors whose centre lines bracket its bearing, nothing else reaches it
                    weight = f[k0] * w0 + f[k1] * w1
                    v = vertical_term(sz, height_m, 0.0, settings.mixing_height_m)
                    c = weight * v / (_SQRT_2PI * u * sz * width_rad * x)
                    if settings.depletion_velocity_m_s:
                        c = c * np.exp(-(settings.depletion_velocity_m_s / u) * integral_at_x[key])
                    total += scale * c
    return total.reshape(np.shape(receptor_x))


def reference_hourly(
    receptor_x,
    receptor_y,
    sources: Sequence,
    weather,
    settings,
    emission_g_s=None,
    hour_weights=None,
    return_centreline: bool = False,
):
    """Mean over an hourly record of each hour's off-axis Gaussian plume, the plain way [g m-3].

    Parameters
    ----------
    receptor_x, receptor_y : ndarray
        Receptor coordinates [m].
    sources : sequence
        Each source a ``ReleaseElement`` or a list of them.
    weather : HourlyWeather
        Direction FROM [deg], speed [m s-1], stability index 0..5 per hour; anemometer height.
    settings : DispersionSettings
        As for :func:`reference_sector_average`.
    emission_g_s : ndarray, optional
        Mean emission of each source [g s-1]; default 1 each.
    hour_weights : ndarray, optional
        Emission multiplier of each hour [-]; default 1.
    return_centreline : bool
        Also return the same mean with the lateral term set to 1 (each hour's centre-line value
        at the receptor's downwind distance), an upper bound used to size cut-off tolerances.

    Returns
    -------
    concentration_g_m3 : ndarray
        Same shape as the receptors: sum_h w_h C_h / n_hours, summed over sources.
    centreline_g_m3 : ndarray
        Only with ``return_centreline``.

    Notes
    -----
    C_h = Q / (2 pi u sy sz) exp(-y^2 / 2 sy^2) V ([Turner1970] Eq. 3.1) with y the crosswind
    and x the along-wind distance of the receptor; receptors more than min_distance_m upwind get
    zero; x is raised to min_distance_m; sy, sz at x plus the element's virtual distances; the
    depletion fraction is taken at x.

    With ``weather.direction_step_deg`` = Delta > 0 (read with getattr, default 0), the hour's
    wind direction is taken as uniform within +-Delta/2 of the reported one; a turn by t moves
    the receptor to y - x t (first order), so the lateral factor exp(-y^2 / 2 sy^2) /
    (sqrt(2 pi) sy) becomes its mean over t:
    (erf((y + x Delta/2) / (sqrt 2 sy)) - erf((y - x Delta/2) / (sqrt 2 sy))) / (2 x Delta),
    applied here as the centre-line plume times sqrt(2 pi) sy times that mean. The centre-line
    bound of ``return_centreline`` is unchanged (the mean never exceeds the peak).
    """
    rx = np.asarray(receptor_x, dtype=float).ravel()
    ry = np.asarray(receptor_y, dtype=float).ravel()
    emissions = _emissions(sources, emission_g_s)
    n_hours = int(np.size(weather.direction_deg))
    step_rad = np.deg2rad(float(getattr(weather, "direction_step_deg", 0.0)))
    weights = np.ones(n_hours) if hour_weights is None else np.asarray(hour_weights, float)
    scheme = settings.scheme
    total = np.zeros(rx.size)
    centreline = np.zeros(rx.size)
    if n_hours == 0:
        return (total, centreline) if return_centreline else total
    for source, q in zip(sources, emissions):
        for element in _elements(source):
            dx, dy = rx - element.x_m, ry - element.y_m
            distance_m = np.hypot(dx, dy)
            bearing_rad = np.arctan2(dx, dy)  # source -> receptor, clockwise from north
            max_distance_m = float(distance_m.max()) + element.min_distance_m
            virtual = {}
            integrals: dict = {}
            for h in range(n_hours):
                s = int(weather.stability_index[h])
                if s not in virtual:
                    virtual[s] = (
                        virtual_distance_m(
                            element.sigma_y0_m, lambda d, s=s: scheme.sigma_y_m(d, s)
                        ),
                        virtual_distance_m(
                            element.sigma_z0_m, lambda d, s=s: scheme.sigma_z_m(d, s)
                        ),
                    )
                xy, xz = virtual[s]

                def sigma_z_of(d, s=s, xz=xz):
                    return scheme.sigma_z_m(d + xz, s)

                u, height_m = _wind_and_height(
                    element,
                    float(weather.speed_m_s[h]),
                    weather.anemometer_height_m,
                    settings.wind_exponents[s],
                    s,
                    settings,
                )
                travel_rad = np.deg2rad(float(weather.direction_deg[h]) + 180.0)
                off_axis = bearing_rad - travel_rad
                along_m = distance_m * np.cos(off_axis)
                cross_m = distance_m * np.sin(off_axis)
                downwind = along_m > -element.min_distance_m
                x = np.maximum(along_m, element.min_distance_m)
                sy = np.maximum(scheme.sigma_y_m(x + xy, s), 1e-6)
                sz = np.maximum(sigma_z_of(x), 1e-6)
                scale = q * element.share_fraction * weights[h]
                if step_rad > 0:  # the centre-line plume times the averaged lateral factor
                    half_m = 0.5 * x * step_rad
                    mean_lateral = (
                        erf((cross_m + half_m) / (np.sqrt(2.0) * sy))
                        - erf((cross_m - half_m) / (np.sqrt(2.0) * sy))
                    ) / (2.0 * x * step_rad)
                    c = (
                        plume_concentration_g_m3(
                            scale, u, 0.0, sy, sz, height_m, 0.0, settings.mixing_height_m
                        )
                        * _SQRT_2PI
                        * sy
                        * mean_lateral
                    )
                else:
                    c = plume_concentration_g_m3(
                        scale, u, cross_m, sy, sz, height_m, 0.0, settings.mixing_height_m
                    )
                depletion = _depletion(
                    integrals,
                    (s, round(height_m, 9)),
                    sigma_z_of,
                    height_m,
                    settings,
                    max_distance_m,
                )
                airborne = (
                    1.0
                    if depletion is None
                    else np.exp(-(settings.depletion_velocity_m_s / u) * depletion(x))
                )
                total += np.where(downwind, c * airborne, 0.0)
                if return_centreline:
                    cl = plume_concentration_g_m3(
                        scale, u, 0.0, sy, sz, height_m, 0.0, settings.mixing_height_m
                    )
                    centreline += np.where(downwind, cl * airborne, 0.0)
    shape = np.shape(receptor_x)
    total = (total / n_hours).reshape(shape)
    if return_centreline:
        return total, (centreline / n_hours).reshape(shape)
    return total
