"""Long-term (annual mean) concentration over a weather frequency table, sector averaged.

Pure numpy. A source is one or more release elements (a point or volume source is one element;
an area source is a lattice of small volume elements that together integrate the area). For each
element and receptor the annual mean ground-level concentration per unit emission is the sum,
over speed and stability classes, of the sector-averaged plume of the sector the receptor lies
in ([Turner1970] Ch. 10, [EPA1995] Sect. 1.4, from memory). Between two sector centre lines the
value is interpolated linearly in angle, so a receptor on a centre line gets that sector's value
and the angular integral (the mass flux) is the same as with sharp sectors.

How it is computed: apart from the two sector weights, every term depends on the distance alone,
so each element's centre-line profiles (one per sector: the frequency table times the per-class
profiles, a matrix product) are evaluated once on nodes 0.2 % apart in distance and each
receptor reads its two sectors' values off them, interpolating log-linearly in distance. The
work per receptor is then independent of the number of weather classes; the interpolation
changes values by at most ~2e-6 of the per-receptor formula (tests/test_fast_paths.py).

What is not here: the engine's inputs (``inputs.py``: weather classes, release elements,
settings), an element's wind and height per class (``release.py``), the hourly engine's depletion
tables (``depletion.py``), reading the table (``readers/frequency_table.py``), emission
strengths (``physics/emissions.py``), deposition velocities by land cover (the caller
multiplies by v_d).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from siting.dispersion.depletion import TABLE_START_M
from siting.dispersion.inputs import (
    N_STABILITY,
    DispersionSettings,
    ReleaseElement,
    WeatherClasses,
)
from siting.dispersion.release import release_wind_and_height
from siting.physics.deposition import (
    cumulative_depletion_integral_m0,
    ground_vertical_density_per_m,
    source_depletion_fraction,
)
from siting.physics.plume import virtual_distance_m


@dataclass(frozen=True)
class RadialProfiles:
    """One element's annual mean along every sector centre line, on log-spaced distances.

    ``log_value[k, i]`` is ln of the concentration per unit emission [g m-3 per g s-1] on the
    centre line of sector k at distance exp((first_node + i) * log_step) [m]; a row n_sectors
    repeats row 0 so the sector after the last needs no wrap. Zero values are held as -1e300
    (exp gives exactly 0). The nodes sit on a fixed lattice in ln(distance), so a node's value
    does not depend on which receptors asked for it.

    Attributes
    ----------
    log_value : ndarray, (n_sectors + 1, n_nodes)
        ln of the centre-line values [ln(g m-3 per g s-1)].
    first_node : int
        Lattice index of the first node held.
    log_step : float
        Node spacing in ln(distance [m]) [-].
    """

    log_value: np.ndarray
    first_node: int
    log_step: float

    @property
    def n_nodes(self) -> int:
        """Number of distance nodes held."""
        return self.log_value.shape[1]

    def position(self, distance_m):
        """Node below each distance and the weight of the next one, (i0, w), in ln(distance).

        The weight is taken from the distance's place on the fixed lattice, not relative to
        the first node held, so it is the same whichever nodes a call holds. Distances must be
        > 0; outside the nodes held they take the end node's value.

        Parameters
        ----------
        distance_m : ndarray
            Distances [m], > 0 (a float array; it is overwritten).

        Returns
        -------
        i0 : ndarray of int
            Node below each distance, among those held.
        w : ndarray
            Weight of node i0 + 1 [-], in [0, 1].
        """
        at = np.log(distance_m)
        at *= 1.0 / self.log_step
        below = np.floor(at)
        at -= below
        i0 = below.astype(np.intp)
        i0 -= self.first_node
        outside = (i0 < 0) | (i0 > self.n_nodes - 2)
        if outside.any():
            at[i0 < 0] = 0.0
            at[i0 > self.n_nodes - 2] = 1.0
            np.clip(i0, 0, self.n_nodes - 2, out=i0)
        return i0, at

    def values_at(self, distance_m) -> np.ndarray:
        """Centre-line values of every sector at the distances, (n_sectors, n) [g m-3 per g s-1].

        The engine's own interpolation (log-linear in distance), so a kernel assembled from
        these in angle equals the engine at every offset to rounding.

        Parameters
        ----------
        distance_m : ndarray, (n,)
            Distances [m], > 0.

        Returns
        -------
        ndarray, (n_sectors, n)
            Concentration per unit emission [g m-3 per g s-1].
        """
        i0, weight = self.position(np.asarray(distance_m, dtype=float).copy())
        return _exp_of_log_lerp(self.log_value[:-1, i0], self.log_value[:-1, i0 + 1], weight)


def _exp_of_log_lerp(log_below, log_above, weight) -> np.ndarray:
    """exp(a + w (b - a)): the value between two nodes, interpolated in the logarithm.

    The one interpolation of the profiles, for the engine and for kernels alike (so they agree
    to rounding). ``log_above`` is overwritten with the result.
    """
    log_above -= log_below
    log_above *= weight
    log_above += log_below
    return np.exp(log_above, out=log_above)


_LOG_ZERO = -1e300


def radial_profiles(
    element: ReleaseElement,
    weather: WeatherClasses,
    settings: DispersionSettings,
    min_distance_m: float,
    max_distance_m: float,
) -> RadialProfiles:
    """Centre-line annual means of one element between two distances (per unit emission).

    A_k(x) = sum over speed j and stability s of f[k, j, s] x the sector-averaged plume of class
    (j, s) at distance x, with its source depletion: everything but the sector weights depends
    on the distance alone, so it is evaluated once per element on nodes spaced
    ``settings.profile_log_step`` apart in ln(x) (a matrix product of the frequency table with
    the per-class profiles), not once per receptor.

    With depletion, the depletion integral I(x) is the running trapezoid of the ground-level
    vertical density over the same nodes, extended down to 1 cm (0.2 % steps: its error, ~h^2/12
    of I, is ~3e-7). A node's value therefore depends on the element, the weather and the
    settings only, never on which receptors asked for it.

    Parameters
    ----------
    element : ReleaseElement
        The element.
    weather : WeatherClasses
        The frequency table.
    settings : DispersionSettings
        Dispersion settings (the node spacing among them).
    min_distance_m, max_distance_m : float
        Nearest and farthest distance the profiles must cover [m].

    Returns
    -------
    RadialProfiles
        The profiles on the nodes covering that range.
    """
    step = settings.profile_log_step
    lo = max(min_distance_m, TABLE_START_M)
    first = int(np.floor(np.log(lo) / step))
    last = max(int(np.ceil(np.log(max(max_distance_m, lo)) / step)), first + 1)
    vd = settings.depletion_velocity_m_s
    start = int(np.floor(np.log(TABLE_START_M) / step)) if vd else first
    nodes_m = np.exp(np.arange(start, last + 1) * step)  # from 1 cm with depletion
    freq = weather.frequency_fraction
    n_sectors = freq.shape[0]
    table = np.zeros((n_sectors + 1, last + 1 - first))
    for s in range(N_STABILITY):
        if freq[:, :, s].any():
            _add_class_profiles(table, element, weather, settings, s, nodes_m, first - start)
    table[n_sectors] = table[0]
    positive = table > 0
    log_value = np.full(table.shape, _LOG_ZERO)
    np.log(table, out=log_value, where=positive)
    return RadialProfiles(log_value, first, step)


def _add_class_profiles(
    table: np.ndarray,
    element: ReleaseElement,
    weather: WeatherClasses,
    settings: DispersionSettings,
    s: int,
    nodes_m: np.ndarray,
    cut: int,
) -> None:
    """Add stability class s's share of every sector's centre-line profile to ``table[:-1]``.

    ``nodes_m`` are the profile nodes [m], from 1 cm when the plume is depleted (the depletion
    integral runs from there); the profiles are kept from node ``cut`` on. One matrix product
    of the frequency table per release height, added in the order of the speeds' heights.
    """
    freq = weather.frequency_fraction
    n_sectors = freq.shape[0]
    distance_m = nodes_m[cut:]
    arc_m = np.deg2rad(weather.sector_width_deg) * distance_m
    scheme = settings.scheme
    vd = settings.depletion_velocity_m_s
    xz_m = virtual_distance_m(element.sigma_z0_m, lambda x: scheme.sigma_z_m(x, s))
    sz = np.maximum(scheme.sigma_z_m(nodes_m + xz_m, s), 1e-6)
    for height_m, winds in _winds_by_height(element, weather, settings, s).items():
        density_per_m = ground_vertical_density_per_m(sz, height_m, settings.mixing_height_m)
        # sector average per unit emission, frequency and wind speed: the crosswind-
        # integrated ground-level concentration g(x) spread evenly over the sector's arc
        # (= sector_average_concentration_g_m3(1, 1, 1, x, dtheta, sz, V), V = sqrt(2 pi)
        # sz g). The arc is at the receptor's own distance: the lateral initial spread of a
        # volume source does not widen the sector, so the ring flux equals the emission.
        unit = density_per_m[cut:] / arc_m
        u_m_s = np.array([u for _, u in winds])[:, None]
        per_class = unit[None, :] / u_m_s  # (speeds, nodes)
        if vd:
            integral = cumulative_depletion_integral_m0(nodes_m, density_per_m)[cut:]
            per_class *= source_depletion_fraction(vd, u_m_s, integral[None, :])
        table[:n_sectors] += freq[:, [j for j, _ in winds], s] @ per_class


def _winds_by_height(
    element: ReleaseElement, weather: WeatherClasses, settings: DispersionSettings, s: int
) -> dict[float, list[tuple[int, float]]]:
    """Effective release height [m] -> [(speed class j, wind at release height [m s-1])].

    The vertical term and the depletion integral depend on the height only: one evaluation
    per height (one per class without plume rise), all its speeds at once. Speed classes
    absent from class s are left out.
    """
    freq = weather.frequency_fraction
    by_height: dict[float, list[tuple[int, float]]] = {}
    for j, speed_ref in enumerate(weather.speeds_m_s):
        if freq[:, j, s].any():
            u, height_m = release_wind_and_height(
                element,
                speed_ref,
                weather.anemometer_height_m,
                settings.wind_exponents[s],
                s,
                settings,
            )
            by_height.setdefault(height_m, []).append((j, u))
    return by_height


def sector_position(dx_m, dy_m, weather: WeatherClasses):
    """Sector below each receptor and the weight of the next one: (k0, w1), k1 = k0 + 1 (mod n).

    The wind that carries a plume from the source to a receptor at bearing b (clockwise from
    north) blows from b + 180 deg, the bearing from the receptor back to the source; between
    two sector centre lines the field is interpolated linearly in that angle.

    Parameters
    ----------
    dx_m, dy_m : ndarray
        Receptor offsets from the source [m] (east, north).
    weather : WeatherClasses
        The frequency table (its sector centres).

    Returns
    -------
    k0 : ndarray of int
        Index of the sector below each receptor's angle.
    w1 : ndarray
        Weight of sector k0 + 1 [-], in [0, 1].
    """
    n = len(weather.sector_centres_deg)
    pos = np.arctan2(-np.asarray(dx_m, dtype=float), -np.asarray(dy_m, dtype=float))
    pos *= n / (2.0 * np.pi)
    # the first centre's offset taken into [-n/2, n/2) turns, so pos lies in [-n, n] and one
    # turn added or taken off brings it into [0, n) (a fraction of the float modulo's time)
    offset = weather.sector_centres_deg[0] / weather.sector_width_deg
    pos -= (offset + n / 2.0) % n - n / 2.0
    pos += n * (pos < 0)
    pos -= n * (pos >= n)
    k0 = pos.astype(np.intp)  # pos >= 0: truncation is floor
    np.minimum(k0, n - 1, out=k0)  # pos may round to n itself; w1 = 1 then gives sector 0
    pos -= k0
    return k0, pos


def element_concentration_g_m3_per_g_s(
    receptor_x_m,
    receptor_y_m,
    element: ReleaseElement,
    weather: WeatherClasses,
    settings: DispersionSettings,
) -> np.ndarray:
    """Annual mean ground-level concentration per unit emission of one element [g m-3 per g s-1].

    The element's centre-line profiles (:func:`radial_profiles`) are interpolated to each
    receptor: log-linearly in ln(distance) (exact for a power law; within ~2e-6 of the
    per-receptor formula with the default 0.2 % node spacing, tests/test_fast_paths.py) and
    linearly in angle between the two sector centre lines either side.

    Parameters
    ----------
    receptor_x_m, receptor_y_m : ndarray
        Receptor coordinates [m], same projected CRS as the element.
    element : ReleaseElement
        The release element (its share_fraction is NOT applied here).
    weather : WeatherClasses
        The frequency table.
    settings : DispersionSettings
        Sigma scheme, wind exponents, lid, depletion, node spacing, memory budget.

    Returns
    -------
    concentration : ndarray
        Same shape as the receptors [g m-3 per g s-1]; never negative, finite everywhere.
    """
    rx = np.asarray(receptor_x_m, dtype=float)
    ry = np.asarray(receptor_y_m, dtype=float)
    out = np.zeros(rx.shape, dtype=float)
    if rx.size == 0:
        return out
    flat_x, flat_y, flat_out = rx.ravel(), ry.ravel(), out.ravel()
    nearest_m, reach_m = receptor_range_m(flat_x, flat_y, element)
    profiles = radial_profiles(element, weather, settings, nearest_m, reach_m)
    chunk = settings.chunk_receptors
    for start in range(0, flat_x.size, chunk):
        sl = slice(start, start + chunk)
        flat_out[sl] = _element_chunk(flat_x[sl], flat_y[sl], element, weather, profiles)
    return flat_out.reshape(rx.shape)


def receptor_reach_m(rx, ry, element: ReleaseElement) -> float:
    """Farthest receptor distance [m]: the depletion tables span it, for every chunk alike.

    Parameters
    ----------
    rx, ry : ndarray
        Receptor coordinates [m].
    element : ReleaseElement
        The element.

    Returns
    -------
    float
        The farthest distance plus the element's min_distance_m [m].
    """
    return receptor_range_m(rx, ry, element)[1]


def receptor_range_m(rx, ry, element: ReleaseElement) -> tuple[float, float]:
    """Nearest and farthest receptor distance [m] as the engine sees them (>= min_distance_m).

    Parameters
    ----------
    rx, ry : ndarray
        Receptor coordinates [m].
    element : ReleaseElement
        The element.

    Returns
    -------
    nearest_m, farthest_m : float
        Distances [m]; (1, 1) when there is no receptor.
    """
    if rx.size == 0:
        return 1.0, 1.0
    squared = (rx - element.x_m) ** 2 + (ry - element.y_m) ** 2
    nearest = max(float(np.sqrt(squared.min())), element.min_distance_m)
    return nearest, float(np.sqrt(squared.max())) + element.min_distance_m


def _element_chunk(
    rx, ry, element: ReleaseElement, weather: WeatherClasses, profiles: RadialProfiles
) -> np.ndarray:
    dx, dy = rx - element.x_m, ry - element.y_m
    k0, w1 = sector_position(dx, dy, weather)
    distance_m = dx * dx  # sqrt(dx^2 + dy^2): a fifth of np.hypot's time, no overflow at m scale
    distance_m += dy * dy
    np.sqrt(distance_m, out=distance_m)
    np.maximum(distance_m, element.min_distance_m, out=distance_m)
    i0, weight = profiles.position(distance_m)
    flat = profiles.log_value.ravel()
    index = k0 * profiles.n_nodes + i0
    out = np.zeros_like(w1)
    for sector_weight in (1.0 - w1, w1):  # this sector's centre line, then the next one's
        value = _exp_of_log_lerp(flat.take(index), flat.take(index + 1), weight)
        value *= sector_weight
        out += value
        index += profiles.n_nodes
    return out


def source_concentration_g_m3_per_g_s(
    receptor_x_m,
    receptor_y_m,
    elements: list[ReleaseElement],
    weather: WeatherClasses,
    settings: DispersionSettings,
) -> np.ndarray:
    """Annual mean concentration per unit emission of a source made of elements [g m-3 per g s-1].

    The elements' shares are applied, so the result is for 1 g s-1 emitted by the whole source.

    Parameters
    ----------
    receptor_x_m, receptor_y_m : ndarray
        Receptor coordinates [m].
    elements : list of ReleaseElement
        The source's elements.
    weather : WeatherClasses
        The frequency table.
    settings : DispersionSettings
        Dispersion settings.

    Returns
    -------
    ndarray
        Concentration per unit emission [g m-3 per g s-1], the receptors' shape.
    """
    total = np.zeros(np.shape(receptor_x_m), dtype=float)
    for element in elements:
        total += element.share_fraction * element_concentration_g_m3_per_g_s(
            receptor_x_m, receptor_y_m, element, weather, settings
        )
    return total
