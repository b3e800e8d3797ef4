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

What is not here: reading the table (``weather.py``), emission strengths (``emissions.py``),
deposition velocities by land cover (the caller multiplies by v_d).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from siting.physics.deposition import (
    cumulative_depletion_integral_m0,
    ground_vertical_density_per_m,
    source_depletion_fraction,
)
from siting.physics.plume import (
    WIND_PROFILE_MIN_HEIGHT_M,
    SigmaScheme,
    momentum_plume_rise_m,
    stack_tip_downwash_height_m,
    virtual_distance_m,
    wind_speed_at_height_m_s,
)

N_STABILITY = 6
#: Working memory of the engines per receptor in a chunk [bytes]: an upper estimate (40 float64
#: arrays alive at once; tracemalloc shows about half of that, tests/test_memory.py).
BYTES_PER_RECEPTOR = 40 * 8


@dataclass(frozen=True)
class WeatherClasses:
    """A weather frequency table as arrays.

    Attributes
    ----------
    sector_centres_deg : ndarray, (n_sectors,)
        Evenly spaced directions the wind blows FROM [deg clockwise from north], ascending.
    speeds_m_s : ndarray, (n_speeds,)
        Class wind speeds at the anemometer height [m s-1], > 0.
    frequency_fraction : ndarray, (n_sectors, n_speeds, 6)
        Share of the time in each (sector, speed, stability A..F) class, summing to 1.
    anemometer_height_m : float
        Height of the wind measurement [m].
    """

    sector_centres_deg: np.ndarray
    speeds_m_s: np.ndarray
    frequency_fraction: np.ndarray
    anemometer_height_m: float = 10.0

    @property
    def sector_width_deg(self) -> float:
        """Width of one direction sector [deg], 360 / n_sectors."""
        return 360.0 / len(self.sector_centres_deg)


@dataclass(frozen=True)
class ReleaseElement:
    """One release element of a source, in projected metres.

    ``share_fraction`` is the element's part of its source's emission; ``min_distance_m`` keeps
    receptors on top of the element from a singular 1/x (receptors closer are evaluated at it);
    for a volume element it is its effective radius 2.15 sigma_y0 ([EPA1995] Sect. 1.2.2).

    ``plume_rise``: momentum rise from ``diameter_m`` and ``exit_velocity_m_s`` is added (only
    for an outlet clear of the building wake; the caller decides, see
    plume.gep_stack_height_m). ``stack_tip_downwash``: the release height is lowered where the
    exit velocity is below 1.5 times the wind speed (plume.stack_tip_downwash_height_m). Both
    off by default: no rise is the cautious choice.

    Attributes
    ----------
    x_m, y_m : float
        Position [m] in the run's projected CRS.
    release_height_m : float
        Release height [m], >= 0.
    sigma_y0_m, sigma_z0_m : float
        Initial lateral and vertical spread [m] (volume elements), >= 0.
    diameter_m : float
        Outlet diameter [m] (point sources with rise or downwash).
    exit_velocity_m_s : float
        Outlet exit velocity [m s-1].
    share_fraction : float
        The element's part of its source's emission [-].
    min_distance_m : float
        Receptors closer than this are evaluated at it [m], > 0.
    plume_rise : bool
        Add momentum plume rise.
    stack_tip_downwash : bool
        Lower the release height by stack-tip downwash.
    """

    x_m: float
    y_m: float
    release_height_m: float
    sigma_y0_m: float = 0.0
    sigma_z0_m: float = 0.0
    diameter_m: float = 0.0
    exit_velocity_m_s: float = 0.0
    share_fraction: float = 1.0
    min_distance_m: float = 1.0
    plume_rise: bool = False
    stack_tip_downwash: bool = False


@dataclass(frozen=True)
class DispersionSettings:
    """Model settings shared by all sources of a run.

    ``wind_exponents`` holds the power-law exponent p per stability class A..F;
    ``depletion_velocity_m_s`` is the deposition velocity used to deplete the plume along its
    path (None, the default, switches depletion off); ``depletion_table_points`` the nodes of each
    depletion integral table; ``profile_log_step`` the spacing of the sector engine's centre-line
    profile nodes in ln(distance) (0.002: nodes 0.2 % apart); ``memory_budget_mb`` bounds the
    engines' working arrays (receptors are evaluated in chunks that fit it). ``wind_below_anemometer``,
    ``wind_profile_min_height_m`` and ``min_wind_speed_m_s`` say how the wind at a release
    height below the anemometer is found (plume.wind_speed_at_height_m_s).

    Attributes
    ----------
    scheme : SigmaScheme
        The dispersion coefficients.
    wind_exponents : ndarray, (6,)
        Power-law wind-profile exponent per class A..F [-].
    mixing_height_m : float, optional
        Height of a reflecting lid [m]; None for none.
    depletion_velocity_m_s : float, optional
        Deposition velocity depleting the plume [m s-1]; None for no depletion.
    depletion_table_points : int
        Nodes of each depletion integral table.
    profile_log_step : float
        Spacing of the centre-line profile nodes in ln(distance [m]) [-].
    memory_budget_mb : float
        Working memory of the engines [MB].
    wind_below_anemometer : {"power_law", "unchanged"}
        The rule for the wind below the anemometer height.
    wind_profile_min_height_m : float
        Lowest height the power law is taken down to [m].
    min_wind_speed_m_s : float
        Floor of the wind speed at release height [m s-1].
    extra : dict
        Not read by the engines (free for a caller's notes).
    """

    scheme: SigmaScheme
    wind_exponents: np.ndarray
    mixing_height_m: float | None = None
    depletion_velocity_m_s: float | None = None
    depletion_table_points: int = 256
    profile_log_step: float = 0.002
    memory_budget_mb: float = 256.0
    wind_below_anemometer: str = "power_law"
    wind_profile_min_height_m: float = WIND_PROFILE_MIN_HEIGHT_M
    min_wind_speed_m_s: float = 1.0
    extra: dict = field(default_factory=dict)

    @property
    def chunk_receptors(self) -> int:
        """Receptors evaluated at once so the engines' working arrays fit the memory budget."""
        return max(1_000, int(self.memory_budget_mb * 1e6 / BYTES_PER_RECEPTOR))


def rectangle_elements(
    x_m: float,
    y_m: float,
    width_m: float,
    length_m: float,
    angle_deg: float,
    release_height_m: float,
    element_size_m: float = 5.0,
    sigma_z0_m: float = 0.0,
) -> list[ReleaseElement]:
    """Split a rectangular area source into a lattice of small volume elements.

    The rectangle is centred on (x, y); its length axis points ``angle_deg`` clockwise from
    north. Elements of side <= element_size_m carry equal shares; each has the lateral initial
    spread of an adjacent-volume line element, side / 2.15 ([EPA1992] table of initial
    dimensions, line source of adjacent volumes; from memory), and its receptors are kept at
    least half a side away. This integrates the area numerically rather than lumping it at one
    point.

    Parameters
    ----------
    x_m, y_m : float
        Centre of the rectangle [m].
    width_m, length_m : float
        Its sides [m], > 0.
    angle_deg : float
        Direction of the length axis [deg clockwise from north].
    release_height_m : float
        Release height [m], >= 0.
    element_size_m : float
        Largest side of an element [m], > 0.
    sigma_z0_m : float
        Initial vertical spread of every element [m], >= 0.

    Returns
    -------
    list of ReleaseElement
        The elements, their shares summing to 1.
    """
    n_len = max(1, int(np.ceil(length_m / element_size_m)))
    n_wid = max(1, int(np.ceil(width_m / element_size_m)))
    d_len, d_wid = length_m / n_len, width_m / n_wid
    along = (np.arange(n_len) + 0.5) * d_len - length_m / 2
    across = (np.arange(n_wid) + 0.5) * d_wid - width_m / 2
    a = np.deg2rad(angle_deg)
    ux, uy = np.sin(a), np.cos(a)  # length axis (clockwise from north)
    vx, vy = np.cos(a), -np.sin(a)  # width axis, 90 deg clockwise
    side_m = np.sqrt(d_len * d_wid)
    share = 1.0 / (n_len * n_wid)
    return [
        ReleaseElement(
            x_m + s * ux + t * vx,
            y_m + s * uy + t * vy,
            release_height_m,
            sigma_y0_m=side_m / 2.15,
            sigma_z0_m=sigma_z0_m,
            share_fraction=share,
            min_distance_m=side_m / 2,
        )
        for s in along
        for t in across
    ]


_TABLE_START_M = 0.01


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
        ([0.0], np.geomspace(_TABLE_START_M, max(max_distance_m, 1.0) * 1.01, n_points))
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
    step = np.log(end / _TABLE_START_M) / (n_points - 1)
    with np.errstate(divide="ignore"):
        f = np.log(np.maximum(x, _TABLE_START_M) / _TABLE_START_M) / step
    i0 = np.clip(np.floor(f).astype(np.intp), 0, n_points - 2) + 1  # +1: the leading 0
    node = _TABLE_START_M * np.exp((i0 - 1) * step)
    node_next = _TABLE_START_M * np.exp(i0 * step)
    weight = np.clip((x - node) / (node_next - node), 0.0, 1.0)
    below = x < _TABLE_START_M  # between the leading 0 and 1 cm
    i0 = np.where(below, 0, i0)
    weight = np.where(below, x / _TABLE_START_M, weight)
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


def virtual_distances_m(
    element: ReleaseElement, scheme: SigmaScheme, s: int
) -> tuple[float, float]:
    """Lateral and vertical virtual distances [m] of an element for stability class s.

    Parameters
    ----------
    element : ReleaseElement
        The element (its initial spreads sigma_y0_m, sigma_z0_m).
    scheme : SigmaScheme
        The dispersion coefficients.
    s : int
        Pasquill class, 0..5 for A..F.

    Returns
    -------
    xy_m, xz_m : float
        Lateral and vertical virtual distances [m] (0 for a point element).
    """
    xy_m = virtual_distance_m(element.sigma_y0_m, lambda x: scheme.sigma_y_m(x, s))
    xz_m = virtual_distance_m(element.sigma_z0_m, lambda x: scheme.sigma_z_m(x, s))
    return xy_m, xz_m


def release_wind_and_height(
    element: ReleaseElement,
    speed_ref_m_s: float,
    anemometer_height_m: float,
    exponent: float,
    s: int,
    settings: DispersionSettings,
) -> tuple[float, float]:
    """Wind speed at release height [m s-1] and effective release height [m].

    The wind is taken at the outlet's own height (plume.wind_speed_at_height_m_s, with the
    settings' rule below the anemometer); stack-tip downwash then lowers the height where the
    element has it, and momentum rise is added where the element is allowed rise
    ([EPA1995] Sect. 1.1.2-1.1.4: rise from the downwash-corrected height).

    Parameters
    ----------
    element : ReleaseElement
        The element.
    speed_ref_m_s : float
        Wind speed at the anemometer [m s-1].
    anemometer_height_m : float
        Anemometer height [m].
    exponent : float
        Power-law exponent of the class [-].
    s : int
        Pasquill class, 0..5 for A..F.
    settings : DispersionSettings
        The wind rule below the anemometer and the minimum wind speed.

    Returns
    -------
    speed_m_s : float
        Wind speed at the release height [m s-1].
    height_m : float
        Effective release height [m].
    """
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
    height_m = element.release_height_m
    if element.diameter_m > 0 and element.stack_tip_downwash:
        height_m = float(
            stack_tip_downwash_height_m(height_m, element.diameter_m, element.exit_velocity_m_s, u)
        )
    if element.plume_rise and element.exit_velocity_m_s > 0 and element.diameter_m > 0:
        height_m += float(
            momentum_plume_rise_m(element.diameter_m, element.exit_velocity_m_s, u, s)
        )
    return u, height_m


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
    lo = max(min_distance_m, _TABLE_START_M)
    first = int(np.floor(np.log(lo) / step))
    last = max(int(np.ceil(np.log(max(max_distance_m, lo)) / step)), first + 1)
    vd = settings.depletion_velocity_m_s
    start = int(np.floor(np.log(_TABLE_START_M) / step)) if vd else first
    nodes_m = np.exp(np.arange(start, last + 1) * step)  # from 1 cm with depletion
    cut = first - start
    distance_m = nodes_m[cut:]
    freq = weather.frequency_fraction
    n_sectors = freq.shape[0]
    arc_m = np.deg2rad(weather.sector_width_deg) * distance_m
    scheme = settings.scheme
    table = np.zeros((n_sectors + 1, distance_m.size))
    for s in range(N_STABILITY):
        if not freq[:, :, s].any():
            continue
        xz_m = virtual_distance_m(element.sigma_z0_m, lambda x, s=s: scheme.sigma_z_m(x, s))
        sz = np.maximum(scheme.sigma_z_m(nodes_m + xz_m, s), 1e-6)
        # the vertical term and the depletion integral depend on the height only: one
        # evaluation per height (one per class without plume rise), all its speeds at once
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
        for height_m, winds in by_height.items():
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
    table[n_sectors] = table[0]
    positive = table > 0
    log_value = np.full(table.shape, _LOG_ZERO)
    np.log(table, out=log_value, where=positive)
    return RadialProfiles(log_value, first, step)


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
    pos -= weather.sector_centres_deg[0] / weather.sector_width_deg
    pos %= n
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
    distance_m = np.hypot(dx, dy)
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
